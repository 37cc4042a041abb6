import { describe, expect, it } from 'vitest';
import { createRandom } from '../../src/demo/random.ts';
import { randomReturnPanel, securitySigmas } from '../helpers/returnPanel.ts';
import { EwmaEstimate } from '../../src/risk/estimators/ewma.ts';

describe('continueSecurityVariances (its square roots, replayed from row 0)', () => {
  // invented returns (test data, not a reference): a late listing, a one-day hole, row 0 empty
  const t = 160;
  const n = 4;
  const panel = randomReturnPanel(createRandom(7), t, n, {
    drift: 0.0002,
    loading: (j) => 0.5 + 0.2 * j,
    missing: (d, j) => d === 0 || (j === 2 && d < 40) || (j === 3 && d === 90),
    securityId: (j) => `S${j}`,
  });
  const sigmas = securitySigmas(panel, 0.94, 15);

  it('is the square root of the diagonal of the risk stage\'s EWMA matrix on every date (same lambda, entry and exit rule)', () => {
    const estimate = new EwmaEstimate(panel, 0.94, 15, null);
    for (let d = 0; d < t; d++) {
      estimate.advance(d);
      for (let j = 0; j < n; j++) {
        const sigma = sigmas[d * n + j];
        if (!estimate.covered(j)) expect(sigma, `row ${d}, S${j}`).toBeNaN();
        else expect(sigma, `row ${d}, S${j}`).toBeCloseTo(Math.sqrt(estimate.variance(j)), 15);
      }
    }
  });

  it('has no sigma before seedDays consecutive returns, and none again after a gap until seedDays more', () => {
    // S0 enters at row 15 (returns on rows 1 .. 15); S3 leaves at row 90 and re-enters at row 105
    expect(sigmas[14 * n]).toBeNaN();
    expect(sigmas[15 * n]).toBeGreaterThan(0);
    expect(sigmas[104 * n + 3]).toBeNaN();
    expect(sigmas[105 * n + 3]).toBeGreaterThan(0);
  });
});
