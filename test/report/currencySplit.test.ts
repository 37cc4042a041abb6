import * as ss from 'simple-statistics';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { loadCurrencySplits } from '../../src/report/currencySplit.ts';
import { runRecompute } from '../../src/batch/runRecompute.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';
import { buildScenario, loadDays, RISK, type Scenario } from '../risk/stage/scenario.ts';

/**
 * The volatility with and without currency moves, on the risk-stage scenario: acct-income
 * holds a USD bond, two EUR shares and EUR cash (base USD).
 */

let ws: TempWorkspace;
let s: Scenario;
const WINDOW = 63;

beforeAll(async () => {
  ws = await tempWorkspace({ risk: RISK, limits: [] });
  s = buildScenario(250);
  await loadDays(ws.db, s, 0, s.dates.length - 1);
  await runRecompute(ws.db, ws.config, ws.log, { trigger: 'test' });
}, 60_000);

afterAll(() => ws?.cleanup());

describe('loadCurrencySplits', () => {
  it('gives as full figure the risk stage\'s vol_ex_ante (same weights, same sample covariance of base-currency returns)', async () => {
    const last = s.dates[s.dates.length - 1];
    const [split] = await loadCurrencySplits(ws.db, 'acct-income', last, [WINDOW], 252);
    const [row] = await ws.db.all<{ vol_ex_ante: number }>(
      `select vol_ex_ante from risk_daily where portfolio_id = 'acct-income' and date = $1 and window_days = $2 and estimator = 'sample'`,
      [last, WINDOW],
    );
    expect(split.coverage).toBe(1);
    expect(split.full).toBeCloseTo(row.vol_ex_ante, 12);
  });

  it('sets every fx return to zero for the other figure: local-currency returns, EUR cash still (simple-statistics)', async () => {
    const T = s.dates.length;
    const last = s.dates[T - 1];
    const [split] = await loadCurrencySplits(ws.db, 'acct-income', last, [WINDOW], 252);
    const weights = await ws.db.all<{ security_id: string; weight: number }>(
      `select security_id, weight from value_weights where portfolio_id = 'acct-income' and date = $1 order by security_id`,
      [last],
    );
    const local = (id: string) =>
      Array.from({ length: WINDOW }, (_, k) => {
        const t = T - WINDOW + k;
        return id.startsWith('CASH:') ? 0 : Math.log(s.prices[id][t]! / s.prices[id][t - 1]!);
      });
    let variance = 0;
    for (const a of weights) for (const b of weights) variance += a.weight * b.weight * ss.sampleCovariance(local(a.security_id), local(b.security_id));
    expect(split.withoutFx).toBeCloseTo(Math.sqrt(252 * variance), 12);
    // EUR holdings and cash carry EUR/USD risk here: removing it changes the figure
    expect(Math.abs((split.full ?? 0) - (split.withoutFx ?? 0))).toBeGreaterThan(1e-4);
  });
});
