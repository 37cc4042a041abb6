import { afterEach, describe, expect, it } from 'vitest';
import { resolveConfig } from '../../src/config/load.ts';
import { checkLimits } from '../../src/limits/checkLimits.ts';
import { businessDays } from '../../src/demo/market.ts';
import type { Database } from '../../src/storage/database.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';
import { alertRows, breachRows, writeRiskSeries } from './riskRows.ts';

/** A var_backtest row of the normal 63-day VaR as the loss stage writes it; zone null before 250 tested days. */
async function writeBacktest(db: Database, date: string, exceptions: number, zone: string | null): Promise<void> {
  await db.run(
    `insert into var_backtest (portfolio_id, date, method, window_days, estimator, var_99_1d, pnl, exception, tested_days,
       exceptions_250, kupiec_lr, kupiec_p, zone, run_id)
     values ('acct-growth', $1::date, 'normal', 63, 'sample', 10000, -1000, false, 250, $2, 0, 1, $3, 1)`,
    [date, exceptions, zone],
  );
}

describe('a limit on the backtest zone (metric backtest_zone)', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  it('defaults its levels to the Basel zones: yellow from 5, red from 10, green below 5 (Basel Committee 1996)', () => {
    const config = resolveConfig({ limits: [{ portfolio: '*', metric: 'backtest_zone', window: 63 }] }, 'pipeline.config.json');
    expect(config.limits[0]).toMatchObject({ limit: 10, warning: 5, clear: 4.5 });
  });

  it('still needs a limit for every other metric', () => {
    expect(() => resolveConfig({ limits: [{ portfolio: '*', window: 63 }] }, 'pipeline.config.json')).toThrow(/limits\.0\.limit|needs "limit"/);
  });

  it('alerts the move to yellow, to red and back to green once each, with the zone in the payload', async () => {
    ws = await tempWorkspace({ limits: [{ portfolio: '*', metric: 'backtest_zone', window: 63 }], alerts: { maxAgeDays: 30 } });
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
      `acct-growth: the 63-day normal 99% VaR had 5 exceptions in its last 250 tested days on ${days[2]}: yellow zone (yellow from 5, red from 10)`,
      `acct-growth: the 63-day normal 99% VaR had 10 exceptions in its last 250 tested days on ${days[4]}: red zone (red from 10)`,
      `acct-growth: the 63-day normal 99% VaR had 4 exceptions in its last 250 tested days on ${days[7]}: green zone (green below 5)`,
    ]);
    const [breach] = await breachRows(db);
    expect(breach).toMatchObject({ level: 'breach', opened_on: days[2], escalated_on: days[4], closed_on: days[7], peak_value: 10 });
  });
});
