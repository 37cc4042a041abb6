import { afterEach, describe, expect, it } from 'vitest';
import { RiskfoldError } from '../../../src/errors.ts';
import { runRecompute } from '../../../src/batch/runRecompute.ts';
import type { Database } from '../../../src/storage/database.ts';
import { applyViews } from '../../../src/storage/sqlFiles.ts';
import { insertRows } from '../../helpers/rawRows.ts';
import { tempWorkspace, type TempWorkspace } from '../../helpers/workspace.ts';
import { expectSameRows, readDaily, type DailyRow } from './compare.ts';
import { buildScenario, correctPrice, loadDays, RISK } from './scenario.ts';

// 1e-10, not identity: ret_portfolios sums over holdings in DuckDB's parallel
// aggregation, whose order (and so the last bit) may differ between two evaluations;
// ann_return near zero magnifies that. The stage's own arithmetic repeats exactly.
const AGREE = 1e-10;
// a change in volatility is a difference of two volatilities (~0.1): their last bits, as above, show in it absolutely
const CHANGE_AGREE = 1e-14;

const readStats = (db: Database) =>
  db.all<DailyRow>('select date, window_days, security_id, ann_return, ann_vol, run_id from security_stats order by date, window_days, security_id');
const readContributions = (db: Database) =>
  db.all<DailyRow>(
    'select portfolio_id, date, window_days, estimator, security_id, weight, mcr, ccr, pct, run_id from risk_contributions order by all',
  );
const readVolChange = (db: Database) =>
  db.all<DailyRow>(
    `select portfolio_id, date, window_days, estimator, prev_date, vol_prev, vol_now, from_weights, from_market, status,
            weights_driver_security_id, weights_driver_change, run_id
     from vol_change order by all`,
  );
const readVolChangeSecurities = (db: Database) =>
  db.all<DailyRow>('select portfolio_id, date, window_days, estimator, security_id, weight_prev, weight_now, from_weights, run_id from vol_change_securities order by all');
const readEwmaState = (db: Database) =>
  db.all<DailyRow>('select as_of, decay, seed_days, security_ids::varchar as ids, md5(matrix::varchar) as matrix from risk_ewma_state');

describe('recompute: incremental runs', () => {
  const open: TempWorkspace[] = [];
  afterEach(() => {
    for (const ws of open.splice(0)) ws.cleanup();
  });
  const workspace = async () => {
    const ws = await tempWorkspace({ risk: RISK });
    open.push(ws);
    return ws;
  };

  it('day by day (load one day, recompute from it) gives the same tables as one full recompute', async () => {
    const s = buildScenario();
    const last = s.dates.length - 1;
    const daily = await workspace();
    await loadDays(daily.db, s, 0, last - 5);
    await runRecompute(daily.db, daily.config, daily.log, { trigger: 'test' });
    for (let d = last - 4; d <= last; d++) {
      await loadDays(daily.db, s, d, d);
      await runRecompute(daily.db, daily.config, daily.log, { trigger: 'test', from: s.dates[d] });
    }
    const full = await workspace();
    await loadDays(full.db, s, 0, last);
    await runRecompute(full.db, full.config, full.log, { trigger: 'test' });

    expectSameRows(await readDaily(daily.db), await readDaily(full.db), AGREE);
    expectSameRows(await readStats(daily.db), await readStats(full.db), AGREE);
    expectSameRows(await readContributions(daily.db), await readContributions(full.db), AGREE);
    // each day's change since the day before needs the day before's covariance, rebuilt or restored by the daily run
    const changes = await readVolChange(daily.db);
    expect(changes.filter((r) => r.date === s.dates[last]).length).toBeGreaterThan(0);
    expectSameRows(changes, await readVolChange(full.db), AGREE, ['run_id'], CHANGE_AGREE);
    expectSameRows(await readVolChangeSecurities(daily.db), await readVolChangeSecurities(full.db), AGREE, ['run_id'], CHANGE_AGREE);
    expect(await readEwmaState(daily.db)).toEqual(await readEwmaState(full.db));
    // each daily run continued the stored EWMA matrix instead of replaying history
    const resumed = daily.logLines().filter((l) => l.msg === 'inputs read' && l.ewmaFromState === true);
    expect(resumed.length).toBe(5);
    // each run wrote only its own date onward
    const runs = await daily.db.all<{ run_id: number; n: number }>('select run_id, count(distinct date)::integer as n from risk_daily group by 1 order by 1');
    expect(runs.map((r) => r.n)).toEqual([last - 5 + 1, 1, 1, 1, 1, 1]);
  });

  it('a new day on a long history continues the stored state, with the figures of a full recompute', async () => {
    // 560 dates: past two sliding refreshes (every 256 rows)
    const s = buildScenario(560);
    const last = s.dates.length - 1;
    const daily = await workspace();
    await loadDays(daily.db, s, 0, last - 1);
    await runRecompute(daily.db, daily.config, daily.log, { trigger: 'test' });
    await loadDays(daily.db, s, last, last);
    await runRecompute(daily.db, daily.config, daily.log, { trigger: 'test', from: s.dates[last] });
    const full = await workspace();
    await loadDays(full.db, s, 0, last);
    await runRecompute(full.db, full.config, full.log, { trigger: 'test' });

    const reads = daily.logLines().filter((l) => l.msg === 'inputs read');
    expect(reads.map((l) => [l.fromRow, l.ewmaFromState])).toEqual([
      [0, false],
      [last, true],
    ]);
    expectSameRows(await readDaily(daily.db), await readDaily(full.db), AGREE);
    expectSameRows(await readStats(daily.db), await readStats(full.db), AGREE);
    expectSameRows(await readContributions(daily.db), await readContributions(full.db), AGREE);
    expect(await readEwmaState(daily.db)).toEqual(await readEwmaState(full.db));
  });

  it('redoing the last date (a same-day correction) continues the EWMA from the state of the day before, with the same rows', async () => {
    const s = buildScenario();
    const ws = await workspace();
    await loadDays(ws.db, s, 0, s.dates.length - 1);
    await runRecompute(ws.db, ws.config, ws.log, { trigger: 'test' });
    const before = await readDaily(ws.db);
    const states = await ws.db.all<{ as_of: string }>('select as_of from risk_ewma_state order by as_of');
    expect(states.map((r) => r.as_of)).toEqual(s.dates.slice(-2));
    await runRecompute(ws.db, ws.config, ws.log, { trigger: 'test', from: s.dates[s.dates.length - 1] });
    expect(ws.logLines().filter((l) => l.msg === 'inputs read').map((l) => l.ewmaFromState)).toEqual([false, true]);
    expectSameRows(await readDaily(ws.db), before, AGREE);
  });

  it('a correction well back rewrites exactly the dates from it onward, and equals a full recompute', async () => {
    const s = buildScenario();
    const ws = await workspace();
    await loadDays(ws.db, s, 0, s.dates.length - 1);
    await runRecompute(ws.db, ws.config, ws.log, { trigger: 'test' });
    const before = await readDaily(ws.db);
    const day = 60;
    await correctPrice(ws.db, s, 'EQ-SALTMARSH', day, (s.prices['EQ-SALTMARSH'][day] as number) * 1.03);
    const run = await runRecompute(ws.db, ws.config, ws.log, { trigger: 'correction', from: s.dates[day] });
    const after = await readDaily(ws.db);

    const earlier = (rows: DailyRow[]) => rows.filter((r) => (r.date as string) < s.dates[day]);
    expectSameRows(earlier(after), earlier(before), 0, []);
    const later = after.filter((r) => (r.date as string) >= s.dates[day]);
    expect(new Set(later.map((r) => r.run_id))).toEqual(new Set([run.runId]));
    const changed = later.filter((r, i) => r.vol_ex_ante !== before[earlier(before).length + i].vol_ex_ante);
    expect(changed.length).toBeGreaterThan(100);
    expect(Math.min(...changed.map((r) => r.date as string).map((d) => s.dates.indexOf(d)))).toBe(day);

    await runRecompute(ws.db, ws.config, ws.log, { trigger: 'test' });
    expectSameRows(after, await readDaily(ws.db), AGREE);
  });

  it('an fx correction and a positions correction mid-history, each refreshed and recomputed from its date, equal a rebuild and full recompute', async () => {
    const s = buildScenario();
    const ws = await workspace();
    await loadDays(ws.db, s, 0, s.dates.length - 1);
    await runRecompute(ws.db, ws.config, ws.log, { trigger: 'test' });
    const before = await readDaily(ws.db);

    await insertRows(ws.db, 'fx_rates', ['date', 'currency', 'rate'], [[100001, 1, s.dates[80], 'EUR', s.eurUsd[80] * 1.02]]);
    await runRecompute(ws.db, ws.config, ws.log, { trigger: 'fx correction', from: s.dates[80] });
    // a later snapshot file for acct-growth on day 60: other quantities, one holding gone
    const corrected = { 'EQ-NORDWIND': 1300, 'EQ-QUILLON': 1200, 'CASH:USD': 15000 };
    const rows = Object.entries(corrected).map(([security, quantity], i) => [100002, i + 1, s.dates[60], 'acct-growth', security, quantity]);
    await insertRows(ws.db, 'positions', ['date', 'portfolio_id', 'security_id', 'quantity'], rows);
    await runRecompute(ws.db, ws.config, ws.log, { trigger: 'positions correction', from: s.dates[60], portfolios: ['acct-growth'] });
    const refreshes = ws.logLines().filter((l) => l.msg === 'derived tables refreshed').map((l) => [l.mode, l.from]);
    expect(refreshes.slice(-2)).toEqual([
      ['from', s.dates[80]],
      ['from', s.dates[60]],
    ]);
    // the run for acct-growth read only the returns of what it holds (four stocks and its
    // USD cash), not those of acct-income's bond, EUR stock and EUR cash as the run before did
    const inputs = ws.logLines().filter((l) => l.msg === 'inputs read');
    expect(inputs.at(-1)?.securities).toBe(5);
    expect(inputs.at(-2)?.securities).toBe(8);
    // it kept the EWMA state of the full run before it (by security, and a positions
    // correction changes no return; a state of its five securities alone would make the
    // next run replay): the run of the last date continues from it, every security read
    // (test/loss/lossState.test.ts sees it continue), with the figures of a full recompute
    await runRecompute(ws.db, ws.config, ws.log, { trigger: 'last date again', from: s.dates.at(-1) });
    expect(ws.logLines().filter((l) => l.msg === 'inputs read').at(-1)).toMatchObject({ ewmaFromState: true, securities: 8 });
    const after = { daily: await readDaily(ws.db), stats: await readStats(ws.db), contributions: await readContributions(ws.db) };
    // both corrections moved figures: a test that cannot fail would compare equal tables
    expect(after.daily.filter((r, i) => r.portfolio_value !== before[i].portfolio_value).length).toBeGreaterThan(100);

    await ws.db.run('delete from derived_state');
    await runRecompute(ws.db, ws.config, ws.log, { trigger: 'test' });
    expect(ws.logLines().filter((l) => l.msg === 'derived tables refreshed').at(-1)?.mode).toBe('full');
    expectSameRows(after.daily, await readDaily(ws.db), AGREE);
    expectSameRows(after.stats, await readStats(ws.db), AGREE);
    expectSameRows(after.contributions, await readContributions(ws.db), AGREE);
    // five runs over the whole history: more than the default minute on a busy machine
  }, 180_000);

  it('a run for one portfolio leaves the other portfolios rows untouched', async () => {
    const s = buildScenario();
    const ws = await workspace();
    await loadDays(ws.db, s, 0, s.dates.length - 1);
    const first = await runRecompute(ws.db, ws.config, ws.log, { trigger: 'test' });
    const second = await runRecompute(ws.db, ws.config, ws.log, { trigger: 'test', from: s.dates[200], portfolios: ['acct-income'] });
    expect(second.portfolios).toBe(1);
    const runs = await ws.db.all<{ portfolio_id: string; late: boolean; run_id: number }>(
      `select portfolio_id, date >= $1::date as late, run_id from risk_daily group by all order by all`,
      [s.dates[200]],
    );
    expect(runs).toEqual([
      { portfolio_id: 'acct-growth', late: false, run_id: first.runId },
      { portfolio_id: 'acct-growth', late: true, run_id: first.runId },
      { portfolio_id: 'acct-income', late: false, run_id: first.runId },
      { portfolio_id: 'acct-income', late: true, run_id: second.runId },
    ]);
    const recorded = await ws.db.all('select from_date, portfolios, status, risk_rows from risk_runs where run_id = $1', [second.runId]);
    expect(recorded).toEqual([{ from_date: s.dates[200], portfolios: ['acct-income'], status: 'done', risk_rows: String(second.riskRows) }]);
  });

  it('a failed run is recorded as failed and leaves every result as it was', async () => {
    const s = buildScenario();
    const ws = await workspace();
    await loadDays(ws.db, s, 0, s.dates.length - 1);
    await runRecompute(ws.db, ws.config, ws.log, { trigger: 'test' });
    const before = await readDaily(ws.db);
    await ws.db.run('drop macro table ret_portfolios_since');
    await expect(runRecompute(ws.db, ws.config, ws.log, { trigger: 'broken', from: s.dates[100] })).rejects.toThrow(/ret_portfolios/);
    const [run] = await ws.db.all<{ status: string; error: string }>('select status, error from risk_runs order by run_id desc limit 1');
    expect(run.status).toBe('failed');
    expect(run.error).toMatch(/ret_portfolios/);
    expectSameRows(await readDaily(ws.db), before, 0, []);
    await applyViews(ws.db, ws.log);
  });

  it('refuses a from date that is not an ISO calendar date, naming it', async () => {
    const ws = await workspace();
    const attempt = runRecompute(ws.db, ws.config, ws.log, { trigger: 'test', from: '2024-02-30' });
    await expect(attempt).rejects.toBeInstanceOf(RiskfoldError);
    await expect(attempt).rejects.toThrow(/"2024-02-30" is not an ISO date/);
  });
});
