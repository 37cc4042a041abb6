import type { DuckDBValue } from '@duckdb/node-api';
import { FAILING_PORTFOLIOS_SQL } from '../batch/portfolioIncident.ts';
import type { Config } from '../config/load.ts';
import { isCountMetric } from '../limits/applicableLimits.ts';
import { readDeliveryStatus } from './deliveryStatus.ts';
import { readPortfolioStatus } from './portfolioStatus.ts';
import { limitsOnUnknownPortfolios, requireKnownPortfolios } from './portfolios.ts';
import type { Database } from '../storage/database.ts';
import { readTable, type QueryResult } from './readQuery.ts';
import { hasOutsideChannel } from '../alerts/channels.ts';

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

export interface StatusOptions {
  /** Narrow portfolios, alerts and data problems to this portfolio. */
  portfolio: string | null;
  /** Add the rows behind the summaries (files, open breaches, alerts, data problems). */
  details: boolean;
  /** The instant the expected deliveries are judged at. */
  now: Date;
}

const SHOWN = 20;

/**
 * What operations look at first: a failed or interrupted last run (first, since the
 * figures below are then behind the data), portfolios whose risk the runs could not
 * compute (which, since which run, the error), limits set on a portfolio id no positions
 * name (they watch nothing), each portfolio against its limits, whether
 * the day's files arrived, the last run, then the alerts the channels have not all
 * taken, files held or changed after archiving, and the data problems on the latest
 * valuation date, counted by kind. `details` adds the rows.
 */
export async function readStatus(db: Database, config: Config, options: StatusOptions): Promise<StatusSection[]> {
  const { portfolio } = options;
  if (portfolio !== null) await requireKnownPortfolios(db, [portfolio]);
  const failed = await section(db, 'lastRunFailed', 'THE LAST RUN DID NOT FINISH: risk figures are not up to date', `
    select run_id, trigger, status, started_at, finished_at, error
    from (select * from risk_runs order by run_id desc limit 1)
    where status in ('failed', 'interrupted')`, [], 1);
  // a database from before portfolio_failures, not yet opened by a writer, has none to show
  const [{ known }] = await db.all<{ known: boolean }>("select count(*) > 0 as known from duckdb_tables() where table_name = 'portfolio_failures'");
  const failing = !known ? null : await section(db, 'portfoliosFailing', 'PORTFOLIOS NOT UPDATED: their risk could not be computed, figures are those of their last good run', `
    select f.portfolio_id, f.since_run, r.started_at as failing_since, f.last_run, f.failed_on, f.error
    from (${FAILING_PORTFOLIOS_SQL}) f join risk_runs r on r.run_id = f.since_run
    order by f.portfolio_id`, [portfolio]);
  const unwatched = await limitsOnUnknownPortfolios(db, config);
  const unknownLimits: StatusSection = {
    key: 'limitsOnUnknownPortfolios',
    title: 'LIMITS ON NO KNOWN PORTFOLIO: they watch nothing (a typo in the config?)',
    result: { columns: ['portfolio', 'metric', 'window', 'known_portfolios'], rows: unwatched.map((l) => [l.portfolio, l.metric, l.window, l.known.join(', ')]) },
    total: unwatched.length,
  };
  const portfolios = await readPortfolioStatus(db, config, portfolio);
  const files = await readDeliveryStatus(db, config, options.now);
  const sections: StatusSection[] = [
    ...(failed.total > 0 ? [failed] : []),
    ...(failing && failing.total > 0 ? [failing] : []),
    ...(unknownLimits.total > 0 ? [unknownLimits] : []),
    { key: 'portfolios', title: 'portfolios', result: portfolios, total: portfolios.rows.length },
    { key: 'files', title: 'files by kind', result: files, total: files.rows.length },
    await section(db, 'lastRun', 'last run', `
      select run_id, trigger, status, from_date, portfolios, started_at, finished_at, risk_rows, error
      from risk_runs order by run_id desc`, [], 1),
    withNote(
      await section(db, 'alerts', 'undelivered alerts by kind', `
      select kind, count(*) as alerts, min(as_of) as oldest_as_of, max(attempts) as most_attempts, arg_max(last_error, created_at) as latest_error
      from alerts where delivered_at is null and ($1::varchar is null or portfolio_id = $1)
      group by kind order by kind`, [portfolio]),
      hasOutsideChannel(config) ? undefined : 'no alert channel is configured (alerts.file, alerts.webhook): alerts go to the worker log only',
    ),
  ];
  sections.push(
    await section(db, 'fileProblems', 'files held or changed after archiving, by kind', `
      select problem, count(*) as files, min(since) as oldest_since from (${FILE_PROBLEMS}) group by problem order by problem`, []),
    await dataQualitySection(db, portfolio, 'summary'),
  );
  if (!options.details) return sections;
  sections.push(
    await section(db, 'lastFiles', 'last files', `
      select file_id, name, kind, status, rows, received_at, error
      from ingested_files order by file_id desc`, [], 10),
    await section(db, 'openBreaches', 'open breaches', `
      select breach_id, portfolio_id, metric, method, window_days, estimator, level, limit_value, opened_on, escalated_on, peak_value, peak_on
      from limit_breaches where closed_on is null and not retracted and ($1::varchar is null or portfolio_id = $1)
      order by opened_on, portfolio_id`, [portfolio]),
    await section(db, 'undeliveredAlerts', 'undelivered alerts', `
      select alert_id, kind, portfolio_id, as_of, created_at, attempts, last_error
      from alerts where delivered_at is null and ($1::varchar is null or portfolio_id = $1)
      order by created_at, alert_id`, [portfolio]),
    await section(db, 'fileProblemRows', 'files held or changed after archiving', `
      select name, problem, reason, since from (${FILE_PROBLEMS}) order by since, name`, []),
    await dataQualitySection(db, portfolio, 'rows'),
  );
  return sections;
}

/**
 * Deliveries operations must look at: held in the inbox (not complete yet, or a suspect
 * snapshot drop) or refused unread (a hard link, not a regular file) until a delivery of
 * that name is ingested or rejected or the name leaves the inbox, and archived
 * files whose bytes changed or vanished after they were loaded (the archive audit), until
 * restored, delivered again or acknowledged (ingest.acknowledgedArchiveFiles).
 */
const FILE_PROBLEMS = `
  select name, case when code in ('hard_link', 'not_regular_file') then 'not read: ' else 'held: ' end || code as problem, reason, held_at as since
  from held_files where released_at is null
  union all
  select coalesce(f.name, a.archived_path) as name, 'archive: ' || a.finding as problem,
         a.archived_path || ' (file_id ' || a.file_id || ')' ||
           case a.finding when 'changed' then ' no longer matches the bytes that were loaded' else ' is gone' end as reason,
         a.found_at as since
  from archive_findings a left join ingested_files f on f.file_id = a.file_id
  where a.resolved_at is null`;

function withNote(section: StatusSection, note: string | undefined): StatusSection {
  return note === undefined ? section : { ...section, note };
}

async function dataQualitySection(db: Database, portfolio: string | null, shape: 'summary' | 'rows'): Promise<StatusSection> {
  const key = shape === 'summary' ? 'dataProblems' : 'dataProblemRows';
  const title = shape === 'summary' ? 'data problems on the latest valuation date, by kind' : 'data problems on the latest valuation date';
  const views = await db.all<{ view_name: string }>(
    "select view_name from duckdb_views() where view_name in ('check_data_quality', 'align_valuation_dates')",
  );
  if (views.length < 2) {
    return { key, title, result: { columns: [], rows: [] }, total: 0, note: 'the data-quality views are not in this database' };
  }
  const latest = `from check_data_quality
    where date = (select max(date) from align_valuation_dates) and ($1::varchar is null or portfolio_id = $1)`;
  const sql =
    shape === 'summary'
      ? `select problem, count(*) as rows, count(distinct portfolio_id) as portfolios, count(distinct security_id) as securities
         ${latest} group by problem order by problem`
      : `select portfolio_id, date, security_id, problem, reason ${latest} order by portfolio_id, problem, security_id`;
  return section(db, key, title, sql, [portfolio]);
}

// limit levels and episode peaks are fractions (0.15 = 15%): a table shows them as
// percentages, except on a row whose metric counts (a backtest zone's exceptions)
const FRACTION_COLUMNS = new Set(['limit_value', 'peak_value']);

async function section(db: Database, key: string, title: string, sql: string, params: DuckDBValue[], limit = SHOWN): Promise<StatusSection> {
  const [{ n }] = await db.all<{ n: string }>(`select count(*)::varchar as n from (${sql})`, params);
  const result = await readTable(db, `${sql} limit ${limit}`, params);
  const units = result.columns.map((c) => (FRACTION_COLUMNS.has(c) ? 'percent' : null));
  const metric = result.columns.indexOf('metric');
  result.units = units;
  if (metric >= 0) result.rowUnits = result.rows.map((row) => (isCountMetric(String(row[metric])) ? units.map(() => null) : null));
  return { key, title, result, total: Number(n) };
}
