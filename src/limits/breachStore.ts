import { DOUBLE, INTEGER, VARCHAR } from '../storage/duckdbApi.ts';
import type { ResolvedLimit } from '../config/load.ts';
import { ChunkAppender, readColumns } from '../storage/columnar.ts';
import type { Database } from '../storage/database.ts';
import { limitKey, type Series } from './applicableLimits.ts';
import type { Episode, LimitLevel, MetricPoint } from './episodes.ts';
import type { EpisodeFacts } from './limitAlerts.ts';
import type { StoredEpisode } from './matchEpisodes.ts';

/**
 * What the limit check reads and writes, in bulk: one query per watched series for all
 * portfolios of the run, one for their recorded episodes, one for the alerts already
 * raised; episodes are written through a staging table in two statements. A full
 * backfill of 50 portfolios then costs a handful of statements, not a few per episode.
 */

const RISK_DAILY_FIGURES: Record<Exclude<ResolvedLimit['metric'], 'backtest_zone'>, string> = {
  vol_ex_ante: 'vol_ex_ante',
  vol_realized: 'vol_realized',
  var_99_1d: 'var_99_1d / nullif(portfolio_value, 0)',
  tracking_error_ex_ante: 'tracking_error_ex_ante',
};

/**
 * The figure a limit watches and the rows it is read from (with portfolio_id, date,
 * window_days and estimator): risk_daily (VaR compared as a fraction of value), or for
 * backtest_zone the exceptions in 250 tested days of its method's backtest, null until
 * 250 days have been tested (no zone yet).
 */
export function metricSql(s: Series): { value: string; rows: string } {
  if (s.metric !== 'backtest_zone') return { value: RISK_DAILY_FIGURES[s.metric], rows: 'risk_daily' };
  // the method is one of VAR_METHODS (checked by the config schema)
  return { value: 'case when zone is not null then exceptions_250 end', rows: `(select * from var_backtest where method = '${s.method ?? 'normal'}')` };
}

/** `portfolio|metric|method|window|estimator`: one limit's series of one portfolio. */
export function seriesKey(portfolioId: string, limit: Series): string {
  return `${portfolioId}|${limitKey(limit)}`;
}

/** "portfolio in the run's scope" for a statement whose parameter $1 is the scope (null: every portfolio). */
const IN_SCOPE = `($1::varchar is null or list_contains(from_json($1, '["VARCHAR"]'), portfolio_id))`;
const scopeParam = (portfolios: readonly string[] | null) => (portfolios === null ? null : JSON.stringify(portfolios));

/**
 * The series of one watched figure for every portfolio in scope, from `fromDate` (null:
 * all of it), ascending by date; a null figure reads as NaN (no value, holds the state).
 */
export async function loadMetricSeries(
  db: Database,
  limit: Series,
  portfolios: readonly string[] | null,
  fromDate: string | null,
): Promise<Map<string, MetricPoint[]>> {
  const { value, rows: from } = metricSql(limit);
  const { rows, columns } = await readColumns(
    db,
    `select portfolio_id, date::varchar, ${value} as value from ${from}
     where ${IN_SCOPE} and window_days = $2 and estimator is not distinct from $3 and ($4::date is null or date >= $4::date)
     order by portfolio_id, date`,
    [scopeParam(portfolios), limit.window, limit.estimator, fromDate],
    { portfolio_id: 'text', date: 'text', value: 'double' },
  );
  const series = new Map<string, MetricPoint[]>();
  for (let i = 0; i < rows; i++) {
    const id = columns.portfolio_id[i] as string;
    let points = series.get(id);
    if (!points) series.set(id, (points = []));
    points.push({ date: columns.date[i] as string, value: columns.value[i] });
  }
  return series;
}

export type RecordedEpisode = StoredEpisode & EpisodeFacts;

/** The series columns of a limit_breaches row. */
export interface SeriesRow {
  metric: ResolvedLimit['metric'];
  method: ResolvedLimit['method'];
  window_days: number;
  estimator: ResolvedLimit['estimator'];
}

export function seriesOf(r: SeriesRow): Series {
  return { metric: r.metric, method: r.method, window: r.window_days, estimator: r.estimator };
}

interface BreachRow extends SeriesRow {
  breach_id: number;
  portfolio_id: string;
  opened_on: string;
  closed_on: string | null;
  escalated_on: string | null;
  level: LimitLevel;
  peak_value: number;
  peak_on: string;
}

/**
 * Recorded, not retracted episodes in scope that a replay from `from` may change, by
 * series key: those still open at `from` or opened since. Episodes closed before `from`
 * are settled.
 */
export async function loadEpisodesInScope(db: Database, portfolios: readonly string[] | null, from: string | null): Promise<Map<string, RecordedEpisode[]>> {
  const rows = await db.all<BreachRow>(
    `select breach_id, portfolio_id, metric, method, window_days, estimator, opened_on, closed_on, escalated_on, level, peak_value, peak_on
     from limit_breaches
     where ${IN_SCOPE} and not retracted and ($2::date is null or closed_on is null or closed_on >= $2::date)
     order by opened_on`,
    [scopeParam(portfolios), from],
  );
  const byKey = new Map<string, RecordedEpisode[]>();
  for (const r of rows) {
    const key = seriesKey(r.portfolio_id, seriesOf(r));
    let list = byKey.get(key);
    if (!list) byKey.set(key, (list = []));
    list.push({
      breachId: r.breach_id,
      openedOn: r.opened_on,
      closedOn: r.closed_on,
      escalatedOn: r.escalated_on,
      level: r.level,
      openLevel: r.escalated_on === null ? r.level : 'warning',
      peakValue: r.peak_value,
      peakOn: r.peak_on,
    });
  }
  return byKey;
}

/**
 * Per portfolio, the last date before `from` on which the figure of `limit` was below
 * `clear`: no episode is open after that close (a closing is such a date, and so is every
 * quiet day), so a replay from it gives exactly what a replay from the first date gives
 * from there on, a limit added since included. Looked for in the 31 days before `from`
 * first (a quiet series has one there, and the date bound skips the older rows), then
 * over every date for the portfolios without one. A portfolio missing from the map has
 * no such date: replay from the first date.
 */
export async function lastClearDates(db: Database, limit: Series, clear: number, portfolios: readonly string[], from: string): Promise<Map<string, string>> {
  const { value, rows: source } = metricSql(limit);
  const found = new Map<string, string>();
  for (const since of [-31, null]) {
    const missing = portfolios.filter((p) => !found.has(p));
    if (missing.length === 0) break;
    const rows = await db.all<{ portfolio_id: string; clear_on: string }>(
      `select portfolio_id, max(date)::varchar as clear_on from ${source}
       where ${IN_SCOPE} and window_days = $2 and estimator is not distinct from $3 and date < $4::date
         and ($5::integer is null or date >= $4::date + $5::integer) and ${value} < $6
       group by portfolio_id`,
      [scopeParam(missing), limit.window, limit.estimator, from, since, clear],
    );
    for (const r of rows) found.set(r.portfolio_id, r.clear_on);
  }
  return found;
}

/** Per breach_id in scope, the kinds of alert already raised: each transition is alerted at most once. */
export async function alertedKinds(db: Database, portfolios: readonly string[] | null): Promise<Map<number, Set<string>>> {
  const rows = await db.all<{ breach_id: number; kind: string }>(
    `select distinct breach_id, kind from alerts where breach_id is not null and ${IN_SCOPE}`,
    [scopeParam(portfolios)],
  );
  const kinds = new Map<number, Set<string>>();
  for (const r of rows) (kinds.get(r.breach_id) ?? kinds.set(r.breach_id, new Set()).get(r.breach_id)!).add(r.kind);
  return kinds;
}

export interface EpisodeWrite {
  /** The recorded episode this one continues, or null: a new episode. */
  breachId: number | null;
  portfolioId: string;
  limit: ResolvedLimit;
  episode: Episode;
}

/**
 * Writes the episodes of a run: new ones get breach_ids in the order given, recorded
 * ones are rewritten in place (a recompute may move a peak or a closing). Returns the
 * breach_id of each write, in order.
 */
export async function saveEpisodes(db: Database, writes: readonly EpisodeWrite[], runId: number): Promise<number[]> {
  const fresh = writes.filter((w) => w.breachId === null).length;
  const ids = fresh === 0 ? [] : await db.all<{ id: number }>(`select nextval('breach_id_seq')::integer as id from range($1::bigint) order by id`, [fresh]);
  let next = 0;
  const breachIds = writes.map((w) => w.breachId ?? ids[next++].id);
  await db.run(`create or replace temp table limit_stage_episodes (
    breach_id integer, portfolio_id varchar, metric varchar, method varchar, window_days integer, estimator varchar,
    limit_value double, warning_value double, clear_value double, level varchar, opened_on varchar, escalated_on varchar,
    closed_on varchar, peak_value double, peak_on varchar)`);
  const stage = await ChunkAppender.open(db, 'limit_stage_episodes', [
    INTEGER, VARCHAR, VARCHAR, VARCHAR, INTEGER, VARCHAR, DOUBLE, DOUBLE, DOUBLE, VARCHAR, VARCHAR, VARCHAR, VARCHAR, DOUBLE, VARCHAR,
  ]);
  writes.forEach((w, i) => {
    const { limit, episode: e } = w;
    const values = [breachIds[i], w.portfolioId, limit.metric, limit.method, limit.window, limit.estimator, limit.limit, limit.warning, limit.clear, e.level, e.openedOn, e.escalatedOn, e.closedOn, e.peakValue, e.peakOn];
    values.forEach((v, c) => stage.set(c, v));
    stage.endRow();
  });
  stage.close();
  const facts = ['limit_value', 'warning_value', 'clear_value', 'level', 'opened_on', 'escalated_on', 'closed_on', 'peak_value', 'peak_on'];
  const value = (c: string) => (c.endsWith('_on') ? `s.${c}::date` : `s.${c}`);
  // the staged rows whose breach_id is recorded are rewrites; the others are new
  await db.run(
    `update limit_breaches set ${facts.map((c) => `${c} = ${value(c)}`).join(', ')}, run_id = $1
     from limit_stage_episodes s where limit_breaches.breach_id = s.breach_id`,
    [runId],
  );
  await db.run(
    `insert into limit_breaches (breach_id, portfolio_id, metric, method, window_days, estimator, ${facts.join(', ')}, run_id)
     select s.breach_id, s.portfolio_id, s.metric, s.method, s.window_days, s.estimator, ${facts.map(value).join(', ')}, $1
     from limit_stage_episodes s anti join limit_breaches b on b.breach_id = s.breach_id
     order by s.breach_id`,
    [runId],
  );
  await db.run('drop table limit_stage_episodes');
  return breachIds;
}

/** Marks recorded episodes retracted (corrected data no longer show them). */
export async function retractEpisodes(db: Database, breachIds: readonly number[], runId: number): Promise<void> {
  if (breachIds.length === 0) return;
  await db.run(`update limit_breaches set retracted = true, run_id = $1 where list_contains(from_json($2, '["INTEGER"]'), breach_id)`, [
    runId,
    JSON.stringify(breachIds),
  ]);
}
