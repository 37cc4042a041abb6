import type { Database } from '../storage/database.ts';

/**
 * Adds `suspect_price` to the status of the run's risk_daily rows whose window uses a
 * price flagged suspect and used (mode flag): the portfolio holds the security, or its
 * benchmark does (the tracking error reads the constituents' prices too). A window of W
 * returns ending at t reads the prices of the valuation dates t-W .. t; an EWMA row
 * (window 0) counts the longest window. Runs in the risk stage's transaction, after its
 * rows are written; set-based, and nothing at all while no flag is open.
 */
export async function markSuspectWindows(db: Database, runId: number): Promise<number> {
  return markTouched(db, runId, 'risk_daily', ['portfolio_id', 'date', 'window_days', 'estimator'], `
     longest as (select list_max(windows) as days from pipeline_settings),
     -- who reads a security's price on a date: a portfolio holding it, a benchmark weighting it
     readers as (
       select 'portfolio' as via, portfolio_id as reader, security_id, date, date_index from hold_daily_positions
       union all
       select 'benchmark', benchmark_id, security_id, date, date_index from hold_benchmark_weights
     ),
     -- the run's rows under the name each kind of reader goes by
     run_rows as (
       select 'portfolio' as via, portfolio_id as reader, portfolio_id, date, window_days, estimator from risk_daily where run_id = $1
       union all
       select 'benchmark', benchmark_id, portfolio_id, date, window_days, estimator from risk_daily where run_id = $1 and benchmark_id is not null
     ),
     touched as (
       select distinct r.portfolio_id, r.date, r.window_days, r.estimator
       from suspects s
       cross join longest
       join readers p on p.security_id = s.security_id and p.date_index between s.date_index and s.date_index + longest.days
       join run_rows r on r.via = p.via and r.reader = p.reader and r.date = p.date
       where p.date_index - s.date_index <= case when r.window_days = 0 then longest.days else r.window_days end
     )`);
}

/**
 * The same for the run's historical and filtered historical rows of var_daily (its normal
 * rows are copies of risk_daily's, status included): today's holdings revalued under the
 * returns of the last N valuation dates read the prices of t-N .. t, so a flagged price of
 * a holding in that span marks the row. (The filtered method's sigma today also reads
 * older returns, at a weight of at most lambda^N: nothing left to see.) After write_losses.
 */
export async function markSuspectScenarios(db: Database, runId: number): Promise<number> {
  return markTouched(db, runId, 'var_daily', ['portfolio_id', 'date', 'method', 'window_days'], `
     lookback as (select coalesce(max(window_days), 0) as days from var_daily where run_id = $1 and method <> 'normal'),
     touched as (
       select distinct v.portfolio_id, v.date, v.method, v.window_days
       from suspects s
       cross join lookback
       join hold_daily_positions p on p.security_id = s.security_id and p.date_index between s.date_index and s.date_index + lookback.days
       join var_daily v on v.run_id = $1 and v.method <> 'normal' and v.portfolio_id = p.portfolio_id and v.date = p.date
       where p.date_index - s.date_index <= v.window_days
     )`);
}

/**
 * Adds suspect_price to the status of the run's rows of `table` that the `touched` clause
 * of `clauses` (after SUSPECTS, with the run id as $1) names by `keys`: alone in place of
 * ok, else after the others. Nothing at all while no flag is open.
 */
async function markTouched(db: Database, runId: number, table: 'risk_daily' | 'var_daily', keys: string[], clauses: string): Promise<number> {
  if (!(await anyFlagOpen(db))) return 0;
  const on = keys.map((k) => `${table}.${k} = t.${k}`).join(' and ');
  const rows = await db.all<{ n: number }>(
    `with ${SUSPECTS},${clauses}
     update ${table} set status = case when ${table}.status = 'ok' then 'suspect_price' else ${table}.status || ',suspect_price' end
     from touched t
     where ${on} and ${table}.run_id = $1
     returning 1 as n`,
    [runId],
  );
  return rows.length;
}

/** Flags open and used (mode flag): until one is, the marking costs one count. */
async function anyFlagOpen(db: Database): Promise<boolean> {
  const [{ open }] = await db.all<{ open: number }>(`select count(*)::integer as open from price_checks where ${OPEN_AND_USED}`);
  return open > 0;
}

/** A price_checks row whose flag is open and whose price is used in risk (mode flag; a held one is left out). */
export const OPEN_AND_USED = 'cleared_at is null and not held';

/** Each open, used flag as (security, date_index of its date). */
const SUSPECTS = `suspects as (
       select c.security_id, v.date_index
       from (select security_id, date from price_checks where ${OPEN_AND_USED}) c join align_valuation_dates v on v.date = c.date
     )`;
