import * as ss from 'simple-statistics';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { runRecompute } from '../../../src/batch/runRecompute.ts';
import { ledoitWolfConstantCorrelation } from '../../../src/risk/math/shrinkage.ts';
import { tempWorkspace, type TempWorkspace } from '../../helpers/workspace.ts';
import { readDaily, expectSameRows, type DailyRow } from './compare.ts';
import { buildScenario, loadDays, RISK } from './scenario.ts';
import { readStoredInputs, type StoredInputs } from '../../helpers/storedInputs.ts';

/**
 * The `shrunk` estimator in the risk stage, on the seeded scenario: each row against a
 * computation of its own from the stored log returns and weights. The shrinkage itself
 * is src/risk/math/shrinkage.ts, checked against numpy and scikit-learn 1.2.1 in
 * test/risk/math/shrinkage.test.ts; what is checked here is which returns go in (the W
 * returns ending at the date, the covered non-cash holdings), the divisor and the
 * volatility, and that the other estimators' figures do not move.
 */

interface ShrunkRow {
  portfolio_id: string;
  date: string;
  window_days: number;
  vol_ex_ante: number | null;
  shrinkage_intensity: number | null;
  status: string;
}

const A = 252;
const WINDOW = 21;

describe('the shrunk estimator in the risk stage', () => {
  let ws: TempWorkspace;
  let plain: TempWorkspace;
  let dates: string[];
  let rows: ShrunkRow[];
  let returns: StoredInputs['returns'];
  let weights: StoredInputs['weights'];

  beforeAll(async () => {
    const s = buildScenario();
    dates = s.dates;
    ws = await tempWorkspace({ risk: { ...RISK, shrunk: { windows: [WINDOW] } } });
    plain = await tempWorkspace({ risk: RISK });
    for (const w of [ws, plain]) {
      await loadDays(w.db, s, 0, s.dates.length - 1);
      await runRecompute(w.db, w.config, w.log, { trigger: 'test' });
    }
    rows = await ws.db.all<ShrunkRow>(
      `select portfolio_id, date, window_days, vol_ex_ante, shrinkage_intensity, status from risk_daily where estimator = 'shrunk' order by all`,
    );
    ({ returns, weights } = await readStoredInputs(ws.db));
  });
  afterAll(() => {
    ws?.cleanup();
    plain?.cleanup();
  });

  it('leaves every figure of the sample and ewma estimators as a run without it', async () => {
    const others = (all: DailyRow[]) => all.filter((r) => r.estimator !== 'shrunk');
    // to 1e-10 as in incremental.test.ts: two databases' views sum a portfolio's holdings in
    // DuckDB's parallel order, so their last bits may differ, and ann_return near zero magnifies that
    expectSameRows(others(await readDaily(ws.db)), await readDaily(plain.db), 1e-10, ['run_id']);
    const intensities = await ws.db.all<{ n: number }>(`select count(*)::integer as n from risk_daily where estimator <> 'shrunk' and shrinkage_intensity is not null`);
    expect(intensities).toEqual([{ n: 0 }]);
  });

  it('gives a row per portfolio and date of its window, with the status and coverage of the sample estimate', async () => {
    const sample = await ws.db.all<{ key: string }>(
      `select portfolio_id || date || status || coalesce(coverage::varchar, '') as key from risk_daily where estimator = 'sample' and window_days = ${WINDOW} order by all`,
    );
    const shrunk = await ws.db.all<{ key: string }>(
      `select portfolio_id || date || status || coalesce(coverage::varchar, '') as key from risk_daily where estimator = 'shrunk' order by all`,
    );
    expect(shrunk).toEqual(sample);
    expect(new Set(rows.map((r) => r.window_days))).toEqual(new Set([WINDOW]));
  });

  it('matches the shrinkage of the W stored returns of the covered holdings, rescaled to divisor W - 1, and stores its intensity', () => {
    let shrunkPartWay = 0;
    for (const r of rows.filter((x) => x.vol_ex_ante !== null)) {
      const d = dates.indexOf(r.date);
      const held = weights.get(`${r.portfolio_id}|${r.date}`)!;
      const span = dates.slice(d - WINDOW + 1, d + 1);
      const ids = [...held.keys()].filter((id) => span.every((day) => returns.get(id)?.has(day))).sort();
      const x = new Float64Array(WINDOW * ids.length);
      span.forEach((day, u) => ids.forEach((id, k) => (x[u * ids.length + k] = returns.get(id)!.get(day)!)));
      const w = ids.map((id) => held.get(id)!);
      let variance: number;
      if (ids.length >= 2) {
        const { covariance, intensity } = ledoitWolfConstantCorrelation(x, WINDOW, ids.length);
        variance = w.reduce((sum, wi, i) => sum + wi * w.reduce((inner, wk, k) => inner + covariance[i * ids.length + k] * wk, 0), 0);
        expect(r.shrinkage_intensity!).toBeCloseTo(intensity, 12);
        if (intensity > 0 && intensity < 1) shrunkPartWay++;
      } else {
        // one holding: nothing to shrink, its sample variance (simple-statistics, divisor W - 1)
        variance = ids.length === 1 ? w[0] ** 2 * ss.sampleVariance(Array.from(x)) : 0;
        expect(r.shrinkage_intensity).toBeNull();
      }
      expect(r.vol_ex_ante!).toBeCloseTo(Math.sqrt(A * variance), 13);
    }
    expect(shrunkPartWay).toBeGreaterThan(100);
  });

  it('refuses a shrunk window that is not a risk window, and a shrunk limit on a window without it, naming the setting', async () => {
    const { configSchema } = await import('../../../src/config/schema.ts');
    const bad = configSchema.safeParse({ risk: { windows: [63], shrunk: { windows: [21] } } });
    expect(bad.success).toBe(false);
    expect(JSON.stringify(bad.error?.issues)).toMatch(/window 21 is not in risk.windows \(63\)/);
    const limit = configSchema.safeParse({ risk: { windows: [63] }, limits: [{ portfolio: '*', window: 63, estimator: 'shrunk', limit: 0.2 }] });
    expect(JSON.stringify(limit.error?.issues)).toMatch(/window 63 is not in risk.shrunk.windows \(none\)/);
  });
});
