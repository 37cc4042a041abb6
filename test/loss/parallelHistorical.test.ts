import { describe, expect, it } from 'vitest';
import { createRandom } from '../../src/demo/random.ts';
import { historicalVarRows, type HistoricalInputs, type LossFailure } from '../../src/loss/historicalVar.ts';
import type { VarRow } from '../../src/loss/lossStage.ts';
import { walkHistorical } from '../../src/loss/parallelHistorical.ts';
import { randomHoldings, randomReturnPanel, securitySigmas } from '../helpers/returnPanel.ts';

/**
 * Invented returns and holdings (test data, not a reference): 12 securities (one of them
 * cash, one with a hole, one listed late), 3 portfolios whose holdings change every 60
 * days, 620 dates so both lookbacks (250 and 500) have rows.
 */
function inputs(t = 620, n = 12): HistoricalInputs {
  const random = createRandom(41);
  const returns = randomReturnPanel(random, t, n, {
    drift: 0,
    loading: (j) => 0.4 + j / n,
    missing: (d, j) => d === 0 || j === 0 || (j === 3 && d >= 300 && d < 303) || (j === 7 && d < 380),
    securityId: (j) => (j === 0 ? 'CASH:USD' : `EQ-${j}`),
  });
  returns.isCash[0] = 1;
  const ids = ['acct-a', 'acct-b', 'acct-c'];
  const slots = ids.length * t;
  const { offsets, security, weight } = randomHoldings(random, ids.length, t, n, 60, (p) => 4 + p);
  const portfolios = {
    ids,
    firstRow: 0,
    present: new Uint8Array(slots).fill(1),
    value: Float64Array.from({ length: slots }, () => 1e6 * (1 + random.uniform())),
    unpriced: new Uint8Array(slots),
    stale: Uint8Array.from({ length: slots }, (_, s) => (s % 97 === 0 ? 1 : 0)),
    logReturn: new Float64Array(slots),
    offsets,
    security,
    weight,
  };
  return { returns, portfolios, fromRow: 0, sigmaAfter: securitySigmas(returns, 0.94, 21) };
}

/** Every row as text (String(x) round-trips a double exactly), sorted: arrival order aside, equal means bit for bit. */
async function rowsOf(walk: (emit: (row: VarRow, p: number, d: number) => void, fail: (f: LossFailure) => void) => Promise<void> | void) {
  const rows: string[] = [];
  const failures: LossFailure[] = [];
  await walk(
    (row, p, d) => rows.push(`${p}|${d}|${JSON.stringify(row, (_, v) => (typeof v === 'number' ? String(v) : v))}`),
    (f) => failures.push(f),
  );
  return { rows: rows.sort(), failures };
}

describe('walkHistorical', () => {
  const input = inputs();
  const settings = { days: [250, 500], minCoverage: 0.9 };

  it('gives, split by dates over 2 or 3 worker threads, the rows of one walk on this thread, bit for bit', async () => {
    const alone = await rowsOf((emit, fail) => historicalVarRows(input, settings, emit, fail));
    // every date of every portfolio, 2 methods x 2 lookbacks
    expect(alone.rows.length).toBe(3 * 620 * 4);
    expect(alone.rows.filter((r) => r.includes('"status":"ok"')).length).toBeGreaterThan(1000);
    for (const threads of [2, 3]) {
      const split = await rowsOf((emit, fail) => walkHistorical(input, settings, emit, fail, threads));
      expect(split.failures).toEqual([]);
      expect(split.rows).toEqual(alone.rows);
    }
  }, 120_000);

  it('walks a part of the run from fromRow to toRow, and the parts add up to the whole', async () => {
    const whole = await rowsOf((emit, fail) => historicalVarRows({ ...input, fromRow: 500 }, settings, emit, fail));
    const first = await rowsOf((emit, fail) => historicalVarRows({ ...input, fromRow: 500, toRow: 560 }, settings, emit, fail));
    const second = await rowsOf((emit, fail) => historicalVarRows({ ...input, fromRow: 560 }, settings, emit, fail));
    expect(first.rows.length).toBe(3 * 60 * 4);
    expect([...first.rows, ...second.rows].sort()).toEqual(whole.rows);
  });

  it('reports a portfolio whose rows throw and goes on with the others', async () => {
    // a non-finite holding value makes the scenario P&L throw (scenarioPnlAt's check)
    const broken = { ...input, portfolios: { ...input.portfolios, weight: Float64Array.from(input.portfolios.weight) } };
    const slot = 1 * 620 + 530;
    broken.portfolios.weight[broken.portfolios.offsets[slot] + 1] = Number.POSITIVE_INFINITY;
    const out = await rowsOf((emit, fail) => historicalVarRows(broken, settings, emit, fail));
    expect(out.failures).toEqual([{ p: 1, d: 530, message: expect.stringMatching(/^historical VaR: scenarioPnl: values\[1\] must be finite/) }]);
    expect(out.rows.filter((r) => r.startsWith('1|')).every((r) => Number(r.split('|')[1]) < 530)).toBe(true);
    expect(out.rows.filter((r) => r.startsWith('0|')).length).toBe(620 * 4);
  });
});
