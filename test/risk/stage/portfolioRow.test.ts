import { describe, expect, it } from 'vitest';
import { assessRow, type CovarianceView, type Exposure } from '../../../src/risk/walk/portfolioRow.ts';

/**
 * Two holdings with daily variances 0.0001 and 0.0004 and covariance 0.00006 (invented
 * figures). With weights 0.6 / 0.4: w'Sw = 0.36e-4 + 0.16 * 4e-4 + 2 * 0.24 * 0.6e-4
 * = 0.0001288, so sigma = sqrt(252 * 0.0001288) (SPEC section 4, sigma_p = sqrt(A w'Sw)).
 */
const S = [
  [0.0001, 0.00006],
  [0.00006, 0.0004],
];
const cov: CovarianceView = {
  covered: () => true,
  variance: (j) => S[j][j],
  product: (idx, w) => Float64Array.from(idx, (r) => idx.reduce((sum, c, b) => sum + S[r][c] * w[b], 0)),
};
const exposure = (w: number[]): Exposure => ({ j: Int32Array.from([0, 1]), w: Float64Array.from(w), isCash: new Uint8Array(2) });
const settings = { periodsPerYear: 252, minCoverage: 0.95 };

describe('assessRow status', () => {
  it('computes volatility and VaR for a positive value', () => {
    const row = assessRow(exposure([0.6, 0.4]), { value: 1_000_000, unpriced: false, stale: false }, cov, settings, false);
    expect(row.status).toBe('ok');
    expect(row.volExAnte).toBeCloseTo(Math.sqrt(252 * 0.0001288), 12);
    expect(row.var99_1d).toBeGreaterThan(0);
  });

  it('gives value_not_positive and no volatility, VaR or ES at a value of zero or below', () => {
    // a long/short book whose value went negative: weights 3 and -2 would give a volatility in the thousands of percent
    for (const value of [0, -250_000]) {
      const row = assessRow(exposure([3, -2]), { value, unpriced: false, stale: false }, cov, settings, true);
      expect(row.status).toBe('value_not_positive');
      for (const figure of [row.volExAnte, row.var99_1d, row.es975_1d, row.var99_10d, row.es975_10d, row.coverage]) expect(figure).toBeNaN();
      expect(row.contributions).toBeNull();
    }
  });

  it('keeps unpriced ahead of the value test, and adds stale_prices after it', () => {
    expect(assessRow(exposure([0.6, 0.4]), { value: Number.NaN, unpriced: true, stale: false }, cov, settings, false).status).toBe('unpriced');
    expect(assessRow(exposure([3, -2]), { value: -1, unpriced: false, stale: true }, cov, settings, false).status).toBe('value_not_positive,stale_prices');
  });
});
