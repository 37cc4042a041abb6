import type { Logger } from 'pino';
import type { Config, ResolvedLimit } from '../config/load.ts';
import { insertAlert } from '../alerts/outbox.ts';
import type { Database } from '../storage/database.ts';
import { applicableLimits, limitKey } from './applicableLimits.ts';
import {
  alertedKinds,
  lastClosingsBefore,
  loadEpisodesInScope,
  loadMetricSeries,
  retractEpisodes,
  saveEpisodes,
  seriesKey,
  type EpisodeWrite,
  type RecordedEpisode,
} from './breachStore.ts';
import { replayEpisodes, transitionsOf, type Episode, type MetricPoint } from './episodes.ts';
import { lateOpenAlert, retractionAlert, topContributors, transitionAlert } from './limitAlerts.ts';
import { volChangeOn } from './volChangeText.ts';
import { matchEpisodes } from './matchEpisodes.ts';

export interface LimitScope {
  runId: number;
  /** 'YYYY-MM-DD' the run recomputed from; null: the whole history. */
  from: string | null;
  portfolios: string[] | null;
}

export interface LimitOutcome {
  alertsRaised: number;
  openEpisodes: number;
}

/** One (portfolio, limit) series, replayed: what to write and what to alert. */
interface Replayed {
  portfolioId: string;
  limit: ResolvedLimit;
  points: MetricPoint[];
  derived: Episode[];
  matches: { derived: Episode; stored: RecordedEpisode | null }[];
  retracted: RecordedEpisode[];
}

/**
 * Replays the limit episodes over risk_daily for the run's scope and reconciles them
 * with limit_breaches; new transitions go to the alerts outbox. Runs inside the risk
 * stage's transaction (it begins and commits nothing itself), after the run's
 * risk_daily rows are written, so episodes and alerts commit together with the risk.
 * Reads in bulk (one query per watched series for all portfolios), replays in memory,
 * writes the episodes set-based; only the alerts, a few per run, go one by one.
 */
export async function checkLimits(db: Database, config: Config, log: Logger, scope: LimitScope): Promise<LimitOutcome> {
  const stageLog = log.child({ stage: 'limits', runId: scope.runId });
  const outcome: LimitOutcome = { alertsRaised: 0, openEpisodes: 0 };
  if (config.limits.length === 0) return outcome;
  const filter = scope.portfolios === null ? null : JSON.stringify(scope.portfolios);
  const portfolios = await db.all<{ portfolio_id: string; alert_from: string }>(
    `select portfolio_id, max(max(date)) over () - $2::integer as alert_from from risk_daily
     where $1::varchar is null or list_contains(from_json($1, '["VARCHAR"]'), portfolio_id)
     group by portfolio_id order by portfolio_id`,
    [filter, config.alerts.maxAgeDays],
  );
  if (portfolios.length === 0) return outcome;
  const alertFrom = portfolios[0].alert_from;

  const recorded = await loadEpisodesInScope(db, scope.portfolios, scope.from);
  // The state at `from` is known only by replaying from a date with no episode open: the
  // last closing before `from`. The dates before `from` are unchanged, so an episode open
  // at `from` is re-derived exactly up to it and continued; one a previous run could not
  // see (a limit added since) is found too.
  const closings = scope.from === null ? new Map<string, string>() : await lastClosingsBefore(db, scope.portfolios, scope.from);
  const watched = portfolios.flatMap(({ portfolio_id: portfolioId }) =>
    applicableLimits(config.limits, portfolioId).map((limit) => {
      const replayFrom = scope.from === null ? null : (closings.get(seriesKey(portfolioId, limit)) ?? null);
      return { portfolioId, limit, replayFrom };
    }),
  );
  // each watched figure is read once for all portfolios, from the earliest replay start
  const series = new Map<string, Map<string, MetricPoint[]>>();
  for (const { limit } of watched) {
    const key = limitKey(limit);
    if (series.has(key)) continue;
    const starts = watched.filter((w) => limitKey(w.limit) === key).map((w) => w.replayFrom);
    const earliest = starts.includes(null) ? null : (starts as string[]).reduce((a, b) => (a < b ? a : b));
    series.set(key, await loadMetricSeries(db, limit, scope.portfolios, earliest));
  }
  const replayed: Replayed[] = [];
  for (const { portfolioId, limit, replayFrom } of watched) {
    const points = (series.get(limitKey(limit))!.get(portfolioId) ?? []).filter((p) => replayFrom === null || p.date >= replayFrom);
    if (points.length === 0) {
      // no rows for this window/estimator: nothing to judge, so nothing recorded is retracted
      stageLog.debug({ portfolioId, metric: limit.metric, window: limit.window }, 'no risk rows for this limit');
      continue;
    }
    const derived = replayEpisodes(points, limit);
    replayed.push({ portfolioId, limit, points, derived, ...matchEpisodes(derived, recorded.get(seriesKey(portfolioId, limit)) ?? []) });
    outcome.openEpisodes += derived.filter((e) => e.closedOn === null).length;
  }

  const alerted = await alertedKinds(db, scope.portfolios);
  const writes: EpisodeWrite[] = replayed.flatMap((r) => r.matches.map((m) => ({ breachId: m.stored?.breachId ?? null, portfolioId: r.portfolioId, limit: r.limit, episode: m.derived })));
  const breachIds = await saveEpisodes(db, writes, scope.runId);
  await retractEpisodes(db, replayed.flatMap((r) => r.retracted.map((e) => e.breachId)), scope.runId);

  let written = 0;
  for (const r of replayed) {
    for (const { derived: episode } of r.matches) {
      const breachId = breachIds[written++];
      outcome.alertsRaised += await alertEpisode(db, r, episode, breachId, alerted.get(breachId) ?? new Set(), alertFrom, scope.runId);
    }
    for (const episode of r.retracted) {
      stageLog.info({ portfolioId: r.portfolioId, breachId: episode.breachId, openedOn: episode.openedOn }, 'limit episode retracted');
      // tell operations only if they had been told of it
      if ((alerted.get(episode.breachId)?.size ?? 0) === 0) continue;
      const input = { portfolioId: r.portfolioId, limit: r.limit, breachId: episode.breachId, runId: scope.runId, episode, contributors: [] };
      if (await insertAlert(db, retractionAlert(input))) outcome.alertsRaised++;
    }
  }
  stageLog.info(outcome, 'limits checked');
  return outcome;
}

/** Alerts the episode's transitions not alerted before and recent enough; or, once, a late opening. */
async function alertEpisode(
  db: Database,
  r: Replayed,
  episode: Episode,
  breachId: number,
  already: Set<string>,
  alertFrom: string,
  runId: number,
): Promise<number> {
  const { portfolioId, limit, points } = r;
  const due = transitionsOf(episode).filter((t) => !already.has(t.kind) && t.date >= alertFrom);
  let raised = 0;
  for (const t of due) {
    const contributors = await topContributors(db, portfolioId, limit, t.date);
    const volChange = await volChangeOn(db, portfolioId, limit, t.date);
    if (await insertAlert(db, transitionAlert({ portfolioId, limit, breachId, runId, episode, contributors, volChange }, t))) raised++;
  }
  if (episode.closedOn === null && already.size === 0 && due.length === 0) {
    const asOf = points[points.length - 1].date;
    const contributors = await topContributors(db, portfolioId, limit, asOf);
    const volChange = await volChangeOn(db, portfolioId, limit, asOf);
    if (await insertAlert(db, lateOpenAlert({ portfolioId, limit, breachId, runId, episode, contributors, volChange }, asOf, lastValue(points)))) raised++;
  }
  return raised;
}

/** The latest date with a value: an open episode has at least its opening value. */
function lastValue(points: MetricPoint[]): { date: string; value: number } {
  for (let i = points.length - 1; i >= 0; i--) {
    const { date, value } = points[i];
    if (value !== null && Number.isFinite(value)) return { date, value };
  }
  throw new Error('an open episode without any value');
}
