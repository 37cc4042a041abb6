import type { ResolvedLimit } from '../config/load.ts';
import type { Database } from '../storage/database.ts';
import type { Episode, LimitLevel, MetricPoint } from './episodes.ts';
import type { EpisodeFacts } from './limitAlerts.ts';
import type { StoredEpisode } from './matchEpisodes.ts';

/** The figure a limit watches, per row of risk_daily; VaR is compared as a fraction of value. */
const METRIC_SQL: Record<ResolvedLimit['metric'], string> = {
  vol_ex_ante: 'vol_ex_ante',
  vol_realized: 'vol_realized',
  var_99_1d: 'var_99_1d / nullif(portfolio_value, 0)',
};

/** The limit's series for one portfolio, from `fromDate` (null: all of it), ascending. */
export async function loadMetricSeries(
  db: Database,
  portfolioId: string,
  limit: ResolvedLimit,
  fromDate: string | null,
): Promise<MetricPoint[]> {
  return db.all<MetricPoint>(
    `select date, ${METRIC_SQL[limit.metric]} as value from risk_daily
     where portfolio_id = $1 and window_days = $2 and estimator = $3 and ($4::date is null or date >= $4::date)
     order by date`,
    [portfolioId, limit.window, limit.estimator, fromDate],
  );
}

export type RecordedEpisode = StoredEpisode & EpisodeFacts;

interface BreachRow {
  breach_id: number;
  opened_on: string;
  closed_on: string | null;
  escalated_on: string | null;
  level: LimitLevel;
  peak_value: number;
  peak_on: string;
}

/**
 * Recorded, not retracted episodes of this limit that a replay from `from` may change:
 * those still open at `from` or opened since. Episodes closed before `from` are settled.
 */
export async function loadEpisodesInScope(
  db: Database,
  portfolioId: string,
  limit: ResolvedLimit,
  from: string | null,
): Promise<RecordedEpisode[]> {
  const rows = await db.all<BreachRow>(
    `select breach_id, opened_on, closed_on, escalated_on, level, peak_value, peak_on from limit_breaches
     where portfolio_id = $1 and metric = $2 and window_days = $3 and estimator = $4 and not retracted
       and ($5::date is null or closed_on is null or closed_on >= $5::date)
     order by opened_on`,
    [portfolioId, limit.metric, limit.window, limit.estimator, from],
  );
  return rows.map((r) => ({
    breachId: r.breach_id,
    openedOn: r.opened_on,
    closedOn: r.closed_on,
    escalatedOn: r.escalated_on,
    level: r.level,
    openLevel: r.escalated_on === null ? r.level : 'warning',
    peakValue: r.peak_value,
    peakOn: r.peak_on,
  }));
}

/**
 * The last date before `from` on which an episode of this limit closed: on it no episode
 * was open, so a replay can start there. Null: none closed before, replay everything.
 */
export async function lastClosingBefore(db: Database, portfolioId: string, limit: ResolvedLimit, from: string): Promise<string | null> {
  const [row] = await db.all<{ closed_on: string | null }>(
    `select max(closed_on) as closed_on from limit_breaches
     where portfolio_id = $1 and metric = $2 and window_days = $3 and estimator = $4 and not retracted and closed_on < $5::date`,
    [portfolioId, limit.metric, limit.window, limit.estimator, from],
  );
  return row.closed_on;
}

export async function insertEpisode(
  db: Database,
  portfolioId: string,
  limit: ResolvedLimit,
  episode: Episode,
  runId: number,
): Promise<number> {
  const rows = await db.all<{ breach_id: number }>(
    `insert into limit_breaches (portfolio_id, metric, window_days, estimator, limit_value, warning_value, clear_value,
       level, opened_on, escalated_on, closed_on, peak_value, peak_on, run_id)
     values ($1, $2, $3, $4, $5, $6, $7, $8, $9::date, $10::date, $11::date, $12, $13::date, $14)
     returning breach_id`,
    [portfolioId, limit.metric, limit.window, limit.estimator, ...episodeValues(limit, episode), runId],
  );
  return rows[0].breach_id;
}

/** Rewrites a recorded episode in place (same breach_id): a recompute may move its peak or closing. */
export async function updateEpisode(db: Database, breachId: number, limit: ResolvedLimit, episode: Episode, runId: number): Promise<void> {
  await db.run(
    `update limit_breaches set limit_value = $1, warning_value = $2, clear_value = $3, level = $4, opened_on = $5::date,
       escalated_on = $6::date, closed_on = $7::date, peak_value = $8, peak_on = $9::date, run_id = $10
     where breach_id = $11`,
    [...episodeValues(limit, episode), runId, breachId],
  );
}

export async function retractEpisode(db: Database, breachId: number, runId: number): Promise<void> {
  await db.run('update limit_breaches set retracted = true, run_id = $1 where breach_id = $2', [runId, breachId]);
}

/** The kinds of alert already raised for an episode: each transition is alerted at most once. */
export async function alertedKinds(db: Database, breachId: number): Promise<Set<string>> {
  const rows = await db.all<{ kind: string }>('select distinct kind from alerts where breach_id = $1', [breachId]);
  return new Set(rows.map((r) => r.kind));
}

function episodeValues(limit: ResolvedLimit, e: Episode) {
  return [limit.limit, limit.warning, limit.clear, e.level, e.openedOn, e.escalatedOn, e.closedOn, e.peakValue, e.peakOn];
}
