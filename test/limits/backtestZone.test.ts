import { afterEach, describe, expect, it } from 'vitest';
import { resolveConfig } from '../../src/config/load.ts';
import { checkLimits } from '../../src/limits/checkLimits.ts';
import { businessDays } from '../../src/demo/market.ts';
import type { Database } from '../../src/storage/database.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';
import { alertRows, breachRows, writeRiskSeries } from './riskRows.ts';

const NORMAL_63 = { method: 'normal', window: 63, estimator: 'sample' } as const;

/** A var_backtest row as the loss stage writes it (default: the normal 63-day VaR); zone null before 250 tested days. */
async function writeBacktest(
  db: Database,
  date: string,
  exceptions: number,
  zone: string | null,
  series: { method: string; window: number; estimator: string | null } = NORMAL_63,
): Promise<void> {
  await db.run(
    `insert into var_backtest (portfolio_id, date, method, window_days, estimator, var_99_1d, pnl, exception, tested_days,
       exceptions_250, kupiec_lr, kupiec_p, zone, run_id)
     values ('acct-growth', $1::date, $4, $5, $6, 10000, -1000, false, 250, $2, 0, 1, $3, 1)`,
    [date, exceptions, zone, series.method, series.window, series.estimator],
  );
}

const resolve = (limits: unknown[], risk: unknown = {}) => resolveConfig({ limits, risk }, 'pipeline.config.json');
const watched = (limits: unknown[], risk?: unknown) => resolve(limits, risk).limits.map((l) => [l.portfolio, l.method, l.window, l.estimator]);

describe('a limit on the backtest zone (metric backtest_zone)', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  it('defaults its levels to the Basel zones: yellow from 5, red from 10, green below 5 (Basel Committee 1996)', () => {
    const config = resolveConfig({ limits: [{ portfolio: '*', metric: 'backtest_zone', window: 63 }] }, 'pipeline.config.json');
    expect(config.limits[0]).toMatchObject({ limit: 10, warning: 5, clear: 4.5 });
  });

  it('watches every VaR method when none is named: the normal VaR of its window, the historical ones of every scenario count', () => {
    expect(watched([{ portfolio: '*', metric: 'backtest_zone', window: 63 }])).toEqual([
      ['*', 'normal', 63, 'sample'],
      ['*', 'historical', 250, null],
      ['*', 'historical', 500, null],
      ['*', 'filtered_historical', 250, null],
      ['*', 'filtered_historical', 500, null],
    ]);
    // every series keeps the limit's levels
    expect(new Set(resolve([{ portfolio: '*', metric: 'backtest_zone', window: 63, warning: 6 }]).limits.map((l) => l.warning))).toEqual(new Set([6]));
  });

  it('watches only the named method; a historical method\'s window is its scenario days', () => {
    expect(watched([{ portfolio: '*', metric: 'backtest_zone', method: 'normal', window: 0, estimator: 'ewma' }])).toEqual([['*', 'normal', 0, 'ewma']]);
    expect(watched([{ portfolio: 'acct-growth', metric: 'backtest_zone', method: 'filtered_historical', window: 500 }])).toEqual([
      ['acct-growth', 'filtered_historical', 500, null],
    ]);
    // the other metrics carry no method
    expect(watched([{ portfolio: '*', window: 63, limit: 0.2 }])).toEqual([['*', null, 63, 'sample']]);
  });

  it('watches a historical series once when two limits of one portfolio entry imply it, and a named one wins', () => {
    const limits = [
      { portfolio: '*', metric: 'backtest_zone', window: 63 },
      { portfolio: '*', metric: 'backtest_zone', window: 252 },
      { portfolio: '*', metric: 'backtest_zone', method: 'historical', window: 250, warning: 3, clear: 2 },
    ];
    const config = resolve(limits, { historical: { days: [250] } });
    expect(config.limits.map((l) => [l.method, l.window, l.warning])).toEqual([
      ['normal', 63, 5],
      ['filtered_historical', 250, 5],
      ['normal', 252, 5],
      ['historical', 250, 3],
    ]);
  });

  it('refuses a method on another metric, a historical window outside risk.historical.days, and an estimator on a historical method', () => {
    expect(() => resolve([{ portfolio: '*', window: 63, limit: 0.2, method: 'normal' }])).toThrow(/"method" applies to backtest_zone limits only/);
    expect(() => resolve([{ portfolio: '*', metric: 'backtest_zone', method: 'historical', window: 63 }])).toThrow(
      /window 63 is not in risk.historical.days \(250, 500\)/,
    );
    expect(() => resolve([{ portfolio: '*', metric: 'backtest_zone', method: 'historical', window: 250, estimator: 'ewma' }])).toThrow(
      /has no covariance estimator/,
    );
  });

  it('still needs a limit for every other metric', () => {
    expect(() => resolveConfig({ limits: [{ portfolio: '*', window: 63 }] }, 'pipeline.config.json')).toThrow(/limits\.0\.limit|needs "limit"/);
  });

  it('alerts the move to yellow, to red and back to green once each, with the zone in the payload', async () => {
    ws = await tempWorkspace({ limits: [{ portfolio: '*', metric: 'backtest_zone', method: 'normal', window: 63 }], alerts: { maxAgeDays: 30 } });
    const days = businessDays('2026-03-02', 8);
    // before 250 tested days there is no zone: the state holds
    const exceptions: [number, string | null][] = [
      [6, null],
      [3, 'green'],
      [5, 'yellow'],
      [7, 'yellow'],
      [10, 'red'],
      [6, 'yellow'],
      [5, 'yellow'],
      [4, 'green'],
    ];
    await writeRiskSeries(ws.db, { portfolioId: 'acct-growth', points: days.map((d) => [d, 0.1]) });
    for (const [i, [count, zone]] of exceptions.entries()) await writeBacktest(ws.db, days[i], count, zone);
    const { db, config, log } = ws;
    await db.transaction(() => checkLimits(db, config, log, { runId: 1, from: null, portfolios: null }));

    const alerts = await alertRows(db);
    expect(alerts.map((a) => [a.kind, a.as_of, a.data.level, a.data.episode_state, a.data.zone, a.data.metric])).toEqual([
      ['limit_opened', days[2], 'warning', 'open', 'yellow', 'backtest_zone'],
      ['limit_escalated', days[4], 'breach', 'open', 'red', 'backtest_zone'],
      ['limit_closed', days[7], 'closed', 'closed', 'green', 'backtest_zone'],
    ]);
    expect(alerts.map((a) => a.data.text)).toEqual([
      `acct-growth: the 99% VaR backtest (normal, 63-day) had 5 exceptions in its last 250 tested days on ${days[2]}: yellow zone (yellow from 5, red from 10)`,
      `acct-growth: the 99% VaR backtest (normal, 63-day) had 10 exceptions in its last 250 tested days on ${days[4]}: red zone (red from 10)`,
      `acct-growth: the 99% VaR backtest (normal, 63-day) had 4 exceptions in its last 250 tested days on ${days[7]}: green zone (green below 5)`,
    ]);
    const [breach] = await breachRows(db);
    expect(breach).toMatchObject({ level: 'breach', opened_on: days[2], escalated_on: days[4], closed_on: days[7], peak_value: 10 });
  });

  it('alerts each method\'s zone on its own and says which method moved', async () => {
    ws = await tempWorkspace({ limits: [{ portfolio: '*', metric: 'backtest_zone', window: 63 }], risk: { historical: { days: [250] } }, alerts: { maxAgeDays: 30 } });
    const days = businessDays('2026-03-02', 4);
    await writeRiskSeries(ws.db, { portfolioId: 'acct-growth', points: days.map((d) => [d, 0.1]) });
    const historical = { method: 'historical', window: 250, estimator: null };
    const filtered = { method: 'filtered_historical', window: 250, estimator: null };
    // the normal VaR stays green; the historical VaR goes yellow on day 2; the filtered one red on day 3
    for (const [i, d] of days.entries()) {
      await writeBacktest(ws.db, d, 2, 'green');
      await writeBacktest(ws.db, d, [3, 6, 6, 6][i], [3, 6, 6, 6][i] >= 5 ? 'yellow' : 'green', historical);
      await writeBacktest(ws.db, d, [4, 4, 11, 11][i], [4, 4, 11, 11][i] >= 10 ? 'red' : 'green', filtered);
    }
    const { db, config, log } = ws;
    await db.transaction(() => checkLimits(db, config, log, { runId: 1, from: null, portfolios: null }));

    const alerts = await alertRows(db);
    expect(alerts.map((a) => [a.kind, a.as_of, a.data.method, a.data.window_days, a.data.estimator, a.data.zone])).toEqual([
      ['limit_opened', days[1], 'historical', 250, null, 'yellow'],
      ['limit_opened', days[2], 'filtered_historical', 250, null, 'red'],
    ]);
    expect(alerts.map((a) => a.data.text)).toEqual([
      `acct-growth: the 99% VaR backtest (historical, 250 scenarios) had 6 exceptions in its last 250 tested days on ${days[1]}: yellow zone (yellow from 5, red from 10)`,
      `acct-growth: the 99% VaR backtest (filtered historical, 250 scenarios) had 11 exceptions in its last 250 tested days on ${days[2]}: red zone (red from 10)`,
    ]);
    const breaches = await db.all<{ method: string; window_days: number; estimator: string | null; level: string }>(
      'select method, window_days, estimator, level from limit_breaches order by breach_id',
    );
    expect(breaches).toEqual([
      { method: 'historical', window_days: 250, estimator: null, level: 'warning' },
      { method: 'filtered_historical', window_days: 250, estimator: null, level: 'breach' },
    ]);
  });
});
