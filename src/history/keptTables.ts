import type { RunContext } from '../batch/runWriters.ts';
import { sqlString } from '../storage/database.ts';

/**
 * The result tables whose superseded rows are kept, each as `<table>_history` with the
 * same columns plus the system time range during which the row was current, and read
 * back as it stood at any time by the table macro `<table>_asof(ts)`.
 *
 * `reach` says which rows a run's writers may change, as a SQL condition on the table.
 * It may be wider than what the writers touch (only rows that really changed reach
 * history; wider costs time, never correctness); narrower would lose history.
 * A table that does not exist in the database (var_daily before its migration) is skipped.
 */
export interface KeptTable {
  table: string;
  reach(run: RunContext): string;
}

function inPortfolios(run: RunContext): string {
  // the null keeps an empty list valid SQL (and matching nothing)
  return run.portfolios === null ? 'true' : `portfolio_id in (${['null', ...run.portfolios.map(sqlString)].join(', ')})`;
}

function inRunDates(run: RunContext): string {
  return `${run.from === null ? 'true' : `date >= ${sqlString(run.from)}::date`} and ${inPortfolios(run)}`;
}

export const KEPT_TABLES: readonly KeptTable[] = [
  { table: 'risk_daily', reach: inRunDates },
  {
    // with 'latest', a run replaces a portfolio's contributions of an earlier date too
    table: 'risk_contributions',
    reach: (run) => (run.config.risk.contributions === 'all' ? inRunDates(run) : inPortfolios(run)),
  },
  // episodes are few, and a replay may update one opened long before the run's first date
  { table: 'limit_breaches', reach: () => 'true' },
  { table: 'var_daily', reach: inRunDates },
];
