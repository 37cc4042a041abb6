import { afterEach, describe, expect, it } from 'vitest';
import { runRecompute } from '../../src/batch/runRecompute.ts';
import type { Database } from '../../src/storage/database.ts';
import { insertRows } from '../helpers/rawRows.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';
import { buildScenario, correctPrice, loadDays, RISK, type Scenario } from '../risk/stage/scenario.ts';

/**
 * The loss stage's stored state (src/loss/lossState.ts: each security's EWMA variances,
 * each portfolio's worst windows) against the replay a full recompute does: every
 * var_daily, var_backtest and stress_results figure of a run that continues the state
 * equals the full recompute's to 1e-12 relative (the usual check of an incremental path,
 * common practice, no source), and so does a run that finds the state missing, stale or
 * short of a security and replays. The scenarios are 60 and 20 days, so a run's security
 * returns are read from 64 dates before its first (the 63-day window) and the history
 * before that is only in the state.
 */

const RELATIVE = 1e-12;
const CONFIG = {
  risk: { ...RISK, historical: { days: [60, 20] } },
  stress: {
    scenarios: [
      // far back: the run does not read these dates, the stress rows must read them
      { id: 'early-slide', kind: 'historical' as const, from: '2024-01-10', to: '2024-01-31' },
      { id: 'equities-down', kind: 'hypothetical' as const, shocks: [{ all: true as const, return: -0.15 }] },
    ],
  },
};

type Row = Record<string, unknown>;

/** Every loss figure; stress rows at the last date only (a run writes them at its own latest date). */
async function readLosses(db: Database, lastDate: string): Promise<Record<string, Row[]>> {
  return {
    var_daily: await db.all(`select * exclude (run_id, missing), missing::varchar as missing from var_daily order by portfolio_id, date, method, window_days, estimator`),
    var_backtest: await db.all(`select * exclude (run_id) from var_backtest order by portfolio_id, date, method, window_days, estimator`),
    stress_results: await db.all(
      `select * exclude (run_id, missing), missing::varchar as missing from stress_results where date = $1::date order by portfolio_id, scenario_id`,
      [lastDate],
    ),
  };
}

/** Equal rows, numbers to `RELATIVE` of the larger magnitude (NaN equals NaN: a figure that has no value). */
function expectSameLosses(actual: Record<string, Row[]>, expected: Record<string, Row[]>): void {
  const mismatches: string[] = [];
  for (const [table, rows] of Object.entries(expected)) {
    expect(actual[table].length, table).toBe(rows.length);
    expect(rows.length, table).toBeGreaterThan(0);
    rows.forEach((e, i) => {
      for (const [column, value] of Object.entries(e)) {
        const a = actual[table][i][column];
        const same =
          typeof value === 'number' && typeof a === 'number'
            ? (Number.isNaN(value) && Number.isNaN(a)) || Math.abs(a - value) <= RELATIVE * Math.max(Math.abs(a), Math.abs(value))
            : JSON.stringify(a) === JSON.stringify(value);
        if (!same) mismatches.push(`${table} row ${i} (${e.portfolio_id} ${e.date}) ${column}: ${a} vs ${value}`);
      }
    });
  }
  expect(mismatches.slice(0, 10)).toEqual([]);
}

describe('the loss stage state', () => {
  const open: TempWorkspace[] = [];
  afterEach(() => {
    for (const ws of open.splice(0)) ws.cleanup();
  });
  const workspace = async (s: Scenario, days: number, config = CONFIG) => {
    const ws = await tempWorkspace(config);
    open.push(ws);
    await loadDays(ws.db, s, 0, days);
    await runRecompute(ws.db, ws.config, ws.log, { trigger: 'history' });
    return ws;
  };
  const stateReads = (ws: TempWorkspace) => ws.logLines().filter((l) => l.msg === 'loss state read');
  const inputReads = (ws: TempWorkspace) => ws.logLines().filter((l) => l.msg === 'inputs read');
  /** Reads the tables, recomputes everything and expects the same figures. */
  const expectFullAgrees = async (ws: TempWorkspace, s: Scenario) => {
    const last = s.dates[s.dates.length - 1];
    const incremental = await readLosses(ws.db, last);
    await runRecompute(ws.db, ws.config, ws.log, { trigger: 'full' });
    expectSameLosses(incremental, await readLosses(ws.db, last));
  };

  it('new days and a redo of the last date continue it, reading the returns of the last 64 dates only, with the figures of a full recompute', async () => {
    const s = buildScenario();
    const last = s.dates.length - 1;
    const ws = await workspace(s, last - 3);
    for (let d = last - 2; d <= last; d++) {
      await loadDays(ws.db, s, d, d);
      await runRecompute(ws.db, ws.config, ws.log, { trigger: 'new day', from: s.dates[d] });
    }
    await correctPrice(ws.db, s, 'EQ-NORDWIND', last, (s.prices['EQ-NORDWIND'][last] as number) * 0.97);
    await runRecompute(ws.db, ws.config, ws.log, { trigger: 'same-day correction', from: s.dates[last] });
    expect(stateReads(ws).map((l) => [l.sigmaFromState, l.worstFromState])).toEqual([
      [false, false],
      [true, true],
      [true, true],
      [true, true],
      [true, true],
    ]);
    expect(inputReads(ws).map((l) => l.returnsFrom)).toEqual([0, last - 2 - 64, last - 1 - 64, last - 64, last - 64]);
    const states = await ws.db.all<{ as_of: string; n: number }>(
      `select as_of::varchar as as_of, count(*)::integer as n from loss_worst_state group by 1 order by 1`,
    );
    // two portfolios x three window lengths at each of the last two dates
    expect(states).toEqual([
      { as_of: s.dates[last - 1], n: 6 },
      { as_of: s.dates[last], n: 6 },
    ]);
    await expectFullAgrees(ws, s);
  }, 120_000);

  it('a read of its stored tables that fails (it runs beside the estimates) fails the run with its error and writes nothing; the next run goes on', async () => {
    const s = buildScenario();
    const last = s.dates.length - 1;
    const ws = await workspace(s, last - 1);
    const before = await readLosses(ws.db, s.dates[last - 1]);
    await loadDays(ws.db, s, last, last);
    await ws.db.run('alter table loss_worst_state rename to loss_worst_state_away');
    await expect(runRecompute(ws.db, ws.config, ws.log, { trigger: 'new day', from: s.dates[last] })).rejects.toThrow(/loss_worst_state/);
    const [run] = await ws.db.all<{ status: string }>('select status from risk_runs order by run_id desc limit 1');
    expect(run.status).toBe('failed');
    expect(await readLosses(ws.db, s.dates[last - 1])).toEqual(before);
    await ws.db.run('alter table loss_worst_state_away rename to loss_worst_state');
    await runRecompute(ws.db, ws.config, ws.log, { trigger: 'new day again', from: s.dates[last] });
    await expectFullAgrees(ws, s);
  }, 120_000);

  it('a price correction and an fx correction in the middle of history replay it, with the figures of a full recompute', async () => {
    const s = buildScenario();
    const ws = await workspace(s, s.dates.length - 1);
    await correctPrice(ws.db, s, 'EQ-SALTMARSH', 150, (s.prices['EQ-SALTMARSH'][150] as number) * 1.03);
    await runRecompute(ws.db, ws.config, ws.log, { trigger: 'price correction', from: s.dates[150] });
    await insertRows(ws.db, 'fx_rates', ['date', 'currency', 'rate'], [[100001, 1, s.dates[200], 'EUR', s.eurUsd[200] * 1.02]]);
    await runRecompute(ws.db, ws.config, ws.log, { trigger: 'fx correction', from: s.dates[200] });
    // no state at the day before either: the variances and the portfolio returns are read back to the first date
    expect(stateReads(ws).slice(1).map((l) => [l.sigmaFromState, l.worstFromState])).toEqual([
      [false, false],
      [false, false],
    ]);
    await expectFullAgrees(ws, s);
  }, 120_000);

  it('replays when the state is missing, made with other settings, or short of a portfolio, with the figures of a full recompute', async () => {
    const s = buildScenario();
    const last = s.dates.length - 1;
    const ws = await workspace(s, last - 3);
    const newDay = async (d: number) => {
      await loadDays(ws.db, s, d, d);
      await runRecompute(ws.db, ws.config, ws.log, { trigger: 'new day', from: s.dates[d] });
    };
    await ws.db.run('delete from loss_sigma_state');
    await ws.db.run(`delete from loss_worst_state where portfolio_id = 'acct-income'`);
    await newDay(last - 2);
    await ws.db.run(`update loss_sigma_state set settings = '{"risk.ewma.lambda":0.97}'`);
    await ws.db.run(`update loss_worst_state set settings = '{}'`);
    await newDay(last - 1);
    // the EWMA matrix gone as well: the risk stage reads every date, the loss stage still continues its own state
    await ws.db.run('delete from risk_ewma_state');
    await newDay(last);
    expect(stateReads(ws).slice(1).map((l) => [l.sigmaFromState, l.worstFromState])).toEqual([
      [false, false],
      [false, false],
      [true, true],
    ]);
    expect(inputReads(ws).slice(1).map((l) => [l.returnsFrom, l.ewmaFromState])).toEqual([
      [last - 2 - 64, true],
      [last - 1 - 64, true],
      [0, false],
    ]);
    await expectFullAgrees(ws, s);
  }, 120_000);

  it('on a long history, reads the backtest flags of the last 500 dates, and every date for a portfolio with a series too young to fill them, with the figures of a full recompute', async () => {
    const s = buildScenario(560);
    const last = s.dates.length - 1;
    const lastDayOn = async (config: typeof CONFIG) => {
      const ws = await workspace(s, last - 1, config);
      await loadDays(ws.db, s, last, last);
      await runRecompute(ws.db, ws.config, ws.log, { trigger: 'new day', from: s.dates[last] });
      return ws;
    };
    const ws = await lastDayOn(CONFIG);
    // every series tested since its first 60 dates at most: 249 flags among the last 500 dates
    expect(stateReads(ws).at(-1)).toMatchObject({ sigmaFromState: true, worstFromState: true, flagsReadAgain: 0 });
    await expectFullAgrees(ws, s);
    // a 400-day window is tested from its 401st date on: fewer than 249 flags among the last 500, read again over every date
    const young = await lastDayOn({ ...CONFIG, risk: { ...CONFIG.risk, windows: [21, 63, 400] } });
    expect(stateReads(young).at(-1)).toMatchObject({ sigmaFromState: true, worstFromState: true, flagsReadAgain: 2 });
    await expectFullAgrees(young, s);
  }, 240_000);

  it('after a run for one portfolio (a positions correction), the next day continues from the states of the full run before it, with the figures of a full recompute', async () => {
    const s = buildScenario();
    const last = s.dates.length - 1;
    const ws = await workspace(s, last - 1);
    const corrected = { 'EQ-NORDWIND': 1300, 'EQ-QUILLON': 1200, 'CASH:USD': 15000 };
    const rows = Object.entries(corrected).map(([security, quantity], i) => [100002, i + 1, s.dates[last - 1], 'acct-growth', security, quantity]);
    await insertRows(ws.db, 'positions', ['date', 'portfolio_id', 'security_id', 'quantity'], rows);
    const storedBy = () =>
      ws.db.all(`select 'ewma' as state, run_id from risk_ewma_state union all select 'sigma', run_id from loss_sigma_state order by all`);
    const before = await storedBy();
    expect(before.map((r) => r.state)).toEqual(['ewma', 'ewma', 'sigma']);
    await runRecompute(ws.db, ws.config, ws.log, { trigger: 'positions correction', from: s.dates[last - 1], portfolios: ['acct-growth'] });
    expect(await storedBy()).toEqual(before);
    // a run over every portfolio by name reads every security: its states replace the stored ones
    const named = await runRecompute(ws.db, ws.config, ws.log, { trigger: 'recompute', from: s.dates[last - 1], portfolios: ['acct-growth', 'acct-income'] });
    expect(await storedBy()).toEqual(before.map((r) => ({ ...r, run_id: named.runId })));
    await loadDays(ws.db, s, last, last);
    await runRecompute(ws.db, ws.config, ws.log, { trigger: 'new day', from: s.dates[last] });
    // the one-portfolio run read only acct-growth's securities and kept the stored EWMA matrix and
    // variances (by security, untouched by a positions correction): the next day continues from them
    const reads = inputReads(ws);
    expect(reads.at(-3)).toMatchObject({ returnsFrom: last - 1 - 64, securities: 5 });
    expect(reads.at(-1)).toMatchObject({ returnsFrom: last - 64, ewmaFromState: true, securities: 8 });
    // the worst windows are kept per portfolio: acct-income's stay from the run before, at the same last two dates
    expect(stateReads(ws).slice(1).map((l) => [l.sigmaFromState, l.worstFromState])).toEqual([
      [true, true],
      [true, true],
      [true, true],
    ]);
    await expectFullAgrees(ws, s);
  }, 120_000);
});
