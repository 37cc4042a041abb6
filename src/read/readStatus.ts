import type { Database } from '../storage/database.ts';
import { readTable, type QueryResult } from './readQuery.ts';

export interface StatusSection {
  /** Key in `status --format json`. */
  key: string;
  title: string;
  /** Rows shown (at most `limit`) and how many there are in all. */
  result: QueryResult;
  total: number;
  /** Why a section has nothing to show besides "no rows" (a missing view). */
  note?: string;
}

const SHOWN = 20;

/**
 * What operations look at first: a failed or interrupted last run (first, since the
 * figures below are then behind the data), the latest files and what became of them,
 * the latest run, open episodes, the alerts the channels have not all taken, and data
 * problems on the latest valuation date.
 */
export async function readStatus(db: Database): Promise<StatusSection[]> {
  const failed = await section(db, 'lastRunFailed', 'THE LAST RUN DID NOT FINISH: risk figures are not up to date', `
    select run_id, trigger, status, started_at, finished_at, error
    from (select * from risk_runs order by run_id desc limit 1)
    where status in ('failed', 'interrupted')`, 1);
  const sections = [
    ...(failed.total > 0 ? [failed] : []),
    await section(db, 'lastFiles', 'last files', `
      select file_id, name, kind, status, rows, received_at, error
      from ingested_files order by file_id desc`, 10),
    await section(db, 'lastRun', 'last run', `
      select run_id, trigger, status, from_date, portfolios, started_at, finished_at, risk_rows, error
      from risk_runs order by run_id desc`, 1),
    await section(db, 'openBreaches', 'open breaches', `
      select breach_id, portfolio_id, metric, window_days, estimator, level, limit_value, opened_on, peak_value, peak_on
      from limit_breaches where closed_on is null and not retracted
      order by opened_on, portfolio_id`),
    await section(db, 'undeliveredAlerts', 'undelivered alerts', `
      select alert_id, kind, portfolio_id, as_of, created_at, attempts, last_error
      from alerts where delivered_at is null
      order by created_at, alert_id`),
  ];
  sections.push(await dataQualitySection(db));
  return sections;
}

async function dataQualitySection(db: Database): Promise<StatusSection> {
  const key = 'dataProblems';
  const title = 'data problems on the latest valuation date';
  const views = await db.all<{ view_name: string }>(
    "select view_name from duckdb_views() where view_name in ('check_data_quality', 'align_valuation_dates')",
  );
  if (views.length < 2) {
    return { key, title, result: { columns: [], rows: [] }, total: 0, note: 'the data-quality views are not in this database' };
  }
  return section(db, key, title, `
    select portfolio_id, date, security_id, problem, reason
    from check_data_quality
    where date = (select max(date) from align_valuation_dates)
    order by portfolio_id, problem, security_id`);
}

async function section(db: Database, key: string, title: string, sql: string, limit = SHOWN): Promise<StatusSection> {
  const [{ n }] = await db.all<{ n: string }>(`select count(*)::varchar as n from (${sql})`);
  const result = await readTable(db, `${sql} limit ${limit}`);
  return { key, title, result, total: Number(n) };
}
