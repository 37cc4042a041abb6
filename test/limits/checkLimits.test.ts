import { afterEach, describe, expect, it } from 'vitest';
import { checkLimits } from '../../src/limits/checkLimits.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';
import { businessDays } from '../../src/demo/market.ts';
import { alertRows, breachRows, writeRiskSeries } from './riskRows.ts';

describe('checkLimits', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  /** One day-by-day run: the risk stage writes the day's row, then checks limits in its transaction. */
  async function runDay(portfolioId: string, date: string, vol: number | null, runId: number) {
    const { db, config, log } = ws!;
    return db.transaction(async () => {
      await writeRiskSeries(db, { portfolioId, runId, points: [[date, vol]] });
      return checkLimits(db, config, log, { runId, from: date, portfolios: [portfolioId] });
    });
  }

  it('alerts a breach exactly three times: opened at warning, escalated, quiet for days, closed', async () => {
    ws = await tempWorkspace();
    const days = businessDays('2026-03-02', 12);
    // limit 15%: warning 13.5%, clear 12.75% (SPEC section 6 defaults)
    const vols = [0.1, 0.138, 0.14, 0.162, 0.171, 0.165, 0.15, 0.14, 0.13, 0.128, 0.121, 0.11];
    let raised = 0;
    for (let i = 0; i < days.length; i++) raised += (await runDay('acct-growth', days[i], vols[i], i + 1)).alertsRaised;

    const alerts = await alertRows(ws.db);
    expect(raised).toBe(3);
    expect(alerts.map((a) => [a.kind, a.as_of])).toEqual([
      ['limit_opened', days[1]],
      ['limit_escalated', days[3]],
      ['limit_closed', days[10]],
    ]);
    const [breach] = await breachRows(ws.db);
    expect(breach).toMatchObject({
      level: 'breach',
      opened_on: days[1],
      escalated_on: days[3],
      closed_on: days[10],
      peak_value: 0.171,
      peak_on: days[4],
      retracted: false,
    });
    expect(new Set(alerts.map((a) => a.breach_id))).toEqual(new Set([breach.breach_id]));
    expect(new Set(alerts.map((a) => a.alert_id)).size).toBe(3);
  });

  it('writes a payload a person can act on, naming the largest contributors of that date', async () => {
    ws = await tempWorkspace();
    const [d1, d2] = businessDays('2026-03-02', 2);
    await runDay('acct-growth', d1, 0.1, 1);
    await ws.db.run(
      `insert into risk_contributions (portfolio_id, date, window_days, estimator, security_id, weight, mcr, ccr, pct, run_id) values
       ('acct-growth', $1::date, 63, 'sample', 'EQ-NORDWIND', 0.3, 0.22, 0.066, 0.407, 2),
       ('acct-growth', $1::date, 63, 'sample', 'EQ-SOLSTICE', 0.25, 0.2, 0.05, 0.309, 2),
       ('acct-growth', $1::date, 63, 'sample', 'BD-KESTREL-28', 0.35, 0.1, 0.035, 0.216, 2),
       ('acct-growth', $1::date, 63, 'sample', 'CASH:USD', 0.1, 0, 0, 0, 2)`,
      [d2],
    );
    await runDay('acct-growth', d2, 0.162, 2);
    const [alert] = await alertRows(ws.db);
    expect(alert.data).toMatchObject({
      portfolio: 'acct-growth',
      metric: 'vol_ex_ante',
      window_days: 63,
      estimator: 'sample',
      level: 'breach',
      value: 0.162,
      limit: 0.15,
      opened_on: d2,
      peak_value: 0.162,
    });
    expect(alert.data.warning).toBeCloseTo(0.135, 12);
    expect(alert.data.clear).toBeCloseTo(0.1275, 12);
    expect((alert.data.contributors as { security_id: string }[]).map((c) => c.security_id)).toEqual([
      'EQ-NORDWIND',
      'EQ-SOLSTICE',
      'BD-KESTREL-28',
    ]);
    expect(alert.data.text).toBe(
      `acct-growth: 63-day volatility 16.2% reached its 15.0% limit on ${d2}; largest contributors EQ-NORDWIND 41%, EQ-SOLSTICE 31%, BD-KESTREL-28 22%`,
    );
  });

  it('says in words why the volatility moved since the previous date: the market, the weights and the security that moved them', async () => {
    ws = await tempWorkspace();
    const [d1, d2] = businessDays('2026-03-02', 2);
    await runDay('acct-growth', d1, 0.131, 1);
    // 13.1% -> 16.2%: +3.1 points, 2.4 from the market and 0.7 from the weights, 0.5 of it EQ-SOLSTICE's
    await ws.db.run(
      `insert into vol_change (portfolio_id, date, window_days, estimator, prev_date, vol_prev, vol_now, from_weights, from_market,
         status, weights_driver_security_id, weights_driver_change, run_id)
       values ('acct-growth', $1::date, 63, 'sample', $2::date, 0.131, 0.162, 0.007, 0.024, 'ok', 'EQ-SOLSTICE', 0.005, 2)`,
      [d2, d1],
    );
    await runDay('acct-growth', d2, 0.162, 2);
    const [alert] = await alertRows(ws.db);
    expect(alert.data.text).toBe(
      `acct-growth: 63-day volatility 16.2% reached its 15.0% limit on ${d2}. ` +
        `63-day volatility +3.1 points since ${d1}: +2.4 points from the market, +0.7 points from the weights, mostly EQ-SOLSTICE`,
    );
    expect(alert.data.vol_change).toMatchObject({ prev_date: d1, from_market: 0.024, from_weights: 0.007, weights_driver_security_id: 'EQ-SOLSTICE' });
  });

  it('leaves contributors out when they were not kept for the date of the transition', async () => {
    ws = await tempWorkspace();
    await runDay('acct-growth', '2026-03-02', 0.14, 1);
    const [alert] = await alertRows(ws.db);
    expect(alert.data.contributors).toEqual([]);
    expect(alert.data.vol_change).toBeNull();
    expect(alert.data.text).toBe('acct-growth: 63-day volatility 14.0% reached its 13.5% warning level (limit 15.0%) on 2026-03-02');
  });

  it('does not alert again when a recompute re-derives the same episode', async () => {
    ws = await tempWorkspace();
    const days = businessDays('2026-03-02', 4);
    for (const [i, d] of days.entries()) await runDay('acct-growth', d, [0.1, 0.16, 0.17, 0.16][i], i + 1);
    const before = await breachRows(ws.db);
    const { db, config, log } = ws;
    const again = await db.transaction(() => checkLimits(db, config, log, { runId: 9, from: null, portfolios: null }));
    expect(again).toEqual({ alertsRaised: 0, openEpisodes: 1 });
    expect(await breachRows(db)).toEqual(before);
    expect((await alertRows(db)).map((a) => a.kind)).toEqual(['limit_opened']);
  });

  it('lets a specific portfolio limit override the * limit', async () => {
    ws = await tempWorkspace({
      limits: [
        { portfolio: '*', window: 63, limit: 0.15 },
        { portfolio: 'acct-balanced', window: 63, limit: 0.25 },
      ],
    });
    await runDay('acct-growth', '2026-03-02', 0.2, 1);
    await runDay('acct-balanced', '2026-03-02', 0.2, 2);
    const breaches = await breachRows(ws.db);
    expect(breaches.map((b) => [b.portfolio_id, b.level])).toEqual([['acct-growth', 'breach']]);
    await runDay('acct-balanced', '2026-03-03', 0.23, 3);
    const limits = await ws.db.all<{ portfolio_id: string; limit_value: number }>(
      'select portfolio_id, limit_value from limit_breaches order by portfolio_id',
    );
    expect(limits).toEqual([
      { portfolio_id: 'acct-balanced', limit_value: 0.25 },
      { portfolio_id: 'acct-growth', limit_value: 0.15 },
    ]);
  });

  it('watches 1-day 99% VaR as a fraction of value (normal VaR z * sigma_d, z_0.99 from the standard normal table)', async () => {
    // a 2% daily VaR limit; normal VaR = z_0.99 * sigma_d: sigma_d = 0.9% gives 2.09%, 0.8% gives 1.86%
    ws = await tempWorkspace({ limits: [{ portfolio: '*', metric: 'var_99_1d', window: 63, limit: 0.02 }] });
    // 2.32635: standard normal table, value from memory (simple-statistics probit gives 2.3214, too coarse here)
    const z = 2.32635;
    const sigma = new Map([
      ['2026-03-02', 0.008],
      ['2026-03-03', 0.009],
      ['2026-03-04', 0.007],
    ]);
    const { db, config, log } = ws;
    await db.transaction(async () => {
      await writeRiskSeries(db, {
        portfolioId: 'acct-growth',
        points: [...sigma.keys()].map((d) => [d, 0.1] as [string, number]),
        varFraction: (d) => z * sigma.get(d)!,
      });
      await checkLimits(db, config, log, { runId: 1, from: null, portfolios: null });
    });
    const [b] = await breachRows(db);
    // 1.86% is above the 1.8% warning level: the episode opens at warning on the first date
    expect(b).toMatchObject({ opened_on: '2026-03-02', level: 'breach', escalated_on: '2026-03-03', closed_on: '2026-03-04' });
    expect(b.peak_value).toBeCloseTo(z * 0.009, 12);
  });

  it('watches the ex-ante tracking error, naming the largest contributors to it', async () => {
    ws = await tempWorkspace({ benchmarks: { '*': 'bm-core' }, limits: [{ portfolio: '*', metric: 'tracking_error_ex_ante', window: 63, limit: 0.04 }] });
    const { db, config, log } = ws;
    const days = businessDays('2026-03-02', 3);
    // limit 4%: warning 3.6%, clear 3.4% (SPEC section 6 defaults); the vol itself stays low
    const te = [0.03, 0.037, 0.041];
    await db.transaction(async () => {
      await writeRiskSeries(db, { portfolioId: 'acct-growth', points: days.map((d) => [d, 0.05] as [string, number]) });
      for (let i = 0; i < days.length; i++) {
        await db.run(`update risk_daily set benchmark_id = 'bm-core', tracking_error_ex_ante = $1 where date = $2::date`, [te[i], days[i]]);
      }
      await db.run(
        `insert into risk_active_contributions (portfolio_id, date, window_days, estimator, benchmark_id, security_id,
           weight, benchmark_weight, active_weight, mcr, ccr, pct, run_id) values
         ('acct-growth', $1::date, 63, 'sample', 'bm-core', 'EQ-NORDWIND', 0.5, 0.2, 0.3, 0.1, 0.03, 0.73, 1),
         ('acct-growth', $1::date, 63, 'sample', 'bm-core', 'EQ-SOLSTICE', 0, 0.3, -0.3, -0.037, 0.011, 0.27, 1)`,
        [days[1]],
      );
      await checkLimits(db, config, log, { runId: 1, from: null, portfolios: null });
    });
    const [b] = await breachRows(db);
    expect(b).toMatchObject({ opened_on: days[1], level: 'breach', escalated_on: days[2], peak_value: 0.041 });
    expect(await db.all('select metric from limit_breaches')).toEqual([{ metric: 'tracking_error_ex_ante' }]);
    const [opened] = await alertRows(db);
    expect(opened.data.text).toBe(
      'acct-growth: 63-day tracking error 3.7% reached its 3.6% warning level (limit 4.0%) on 2026-03-03; largest contributors EQ-NORDWIND 73%, EQ-SOLSTICE 27%',
    );
  });

  it('only looks at the portfolios of the run', async () => {
    ws = await tempWorkspace();
    const { db, config, log } = ws;
    await db.transaction(async () => {
      await writeRiskSeries(db, { portfolioId: 'acct-growth', points: [['2026-03-02', 0.2]] });
      await writeRiskSeries(db, { portfolioId: 'acct-income', points: [['2026-03-02', 0.2]] });
      await checkLimits(db, config, log, { runId: 1, from: null, portfolios: ['acct-income'] });
    });
    expect((await breachRows(db)).map((b) => b.portfolio_id)).toEqual(['acct-income']);
  });
});
