import type { Logger } from 'pino';
import { listValue } from '@duckdb/node-api';
import type { Config, ResolvedLimit } from '../config/load.ts';
import { insertAlert } from '../alerts/outbox.ts';
import type { Database } from '../storage/database.ts';
import { applicableLimits } from './applicableLimits.ts';
import {
  alertedKinds,
  insertEpisode,
  lastClosingBefore,
  loadEpisodesInScope,
  loadMetricSeries,
  retractEpisode,
  updateEpisode,
  type RecordedEpisode,
} from './breachStore.ts';
import { replayEpisodes, transitionsOf, type Episode, type MetricPoint } from './episodes.ts';
import { lateOpenAlert, retractionAlert, topContributors, transitionAlert } from './limitAlerts.ts';
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

interface LimitRun {
  db: Database;
  log: Logger;
  scope: LimitScope;
  portfolioId: string;
  limit: ResolvedLimit;
  /** Transitions dated before this are recorded but not alerted (a history load, a correction). */
  alertFrom: string;
}

/**
 * Replays the limit episodes over risk_daily for the run's scope and reconciles them
 * with limit_breaches; new transitions go to the alerts outbox. Runs inside the risk
 * stage's transaction (it begins and commits nothing itself), after the run's
 * risk_daily rows are written, so episodes and alerts commit together with the risk.
 */
export async function checkLimits(db: Database, config: Config, log: Logger, scope: LimitScope): Promise<LimitOutcome> {
  const stageLog = log.child({ stage: 'limits', runId: scope.runId });
  const outcome: LimitOutcome = { alertsRaised: 0, openEpisodes: 0 };
  if (config.limits.length === 0) return outcome;
  const filter = scope.portfolios === null ? null : listValue(scope.portfolios);
  const [range] = await db.all<{ alert_from: string | null }>(
    `select max(date) - $2::integer as alert_from from risk_daily
     where $1::varchar[] is null or list_contains($1::varchar[], portfolio_id)`,
    [filter, config.alerts.maxAgeDays],
  );
  if (range.alert_from === null) return outcome;
  const portfolios = await db.all<{ portfolio_id: string }>(
    `select distinct portfolio_id from risk_daily
     where $1::varchar[] is null or list_contains($1::varchar[], portfolio_id) order by portfolio_id`,
    [filter],
  );
  for (const { portfolio_id: portfolioId } of portfolios) {
    for (const limit of applicableLimits(config.limits, portfolioId)) {
      const one = await checkOneLimit({ db, log: stageLog, scope, portfolioId, limit, alertFrom: range.alert_from });
      outcome.alertsRaised += one.alertsRaised;
      outcome.openEpisodes += one.openEpisodes;
    }
  }
  stageLog.info(outcome, 'limits checked');
  return outcome;
}

async function checkOneLimit(run: LimitRun): Promise<LimitOutcome> {
  const { db, scope, portfolioId, limit } = run;
  const recorded = await loadEpisodesInScope(db, portfolioId, limit, scope.from);
  // The state at `from` is known only by replaying from a date with no episode open: the
  // last closing before `from`. The dates before `from` are unchanged, so an episode open
  // at `from` is re-derived exactly up to it and continued; one a previous run could not
  // see (a limit added since) is found too.
  const replayFrom = scope.from === null ? null : await lastClosingBefore(db, portfolioId, limit, scope.from);
  const points = await loadMetricSeries(db, portfolioId, limit, replayFrom);
  if (points.length === 0) {
    // no rows for this window/estimator: nothing to judge, so nothing recorded is retracted
    run.log.debug({ portfolioId, metric: limit.metric, window: limit.window }, 'no risk rows for this limit');
    return { alertsRaised: 0, openEpisodes: 0 };
  }
  const derived = replayEpisodes(points, limit);
  const { matches, retracted } = matchEpisodes(derived, recorded);
  let alertsRaised = 0;
  for (const { derived: episode, stored } of matches) {
    let breachId: number;
    if (stored) {
      breachId = stored.breachId;
      await updateEpisode(db, breachId, limit, episode, scope.runId);
    } else {
      breachId = await insertEpisode(db, portfolioId, limit, episode, scope.runId);
    }
    alertsRaised += await alertEpisode(run, episode, breachId, points);
  }
  for (const episode of retracted) alertsRaised += await retract(run, episode);
  return { alertsRaised, openEpisodes: derived.filter((e) => e.closedOn === null).length };
}

/** Alerts the episode's transitions not alerted before and recent enough; or, once, a late opening. */
async function alertEpisode(run: LimitRun, episode: Episode, breachId: number, points: MetricPoint[]): Promise<number> {
  const { db, portfolioId, limit, scope } = run;
  const already = await alertedKinds(db, breachId);
  const due = transitionsOf(episode).filter((t) => !already.has(t.kind) && t.date >= run.alertFrom);
  let raised = 0;
  for (const t of due) {
    const contributors = await topContributors(db, portfolioId, limit, t.date);
    const input = { portfolioId, limit, breachId, runId: scope.runId, episode, contributors };
    if (await insertAlert(db, transitionAlert(input, t))) raised++;
  }
  if (episode.closedOn === null && already.size === 0 && due.length === 0) {
    const asOf = points[points.length - 1].date;
    const last = lastValue(points);
    const contributors = await topContributors(db, portfolioId, limit, asOf);
    const input = { portfolioId, limit, breachId, runId: scope.runId, episode, contributors };
    if (await insertAlert(db, lateOpenAlert(input, asOf, last))) raised++;
  }
  return raised;
}

/** Marks a recorded episode retracted; tells operations only if they had been told of it. */
async function retract(run: LimitRun, episode: RecordedEpisode): Promise<number> {
  const { db, portfolioId, limit, scope } = run;
  await retractEpisode(db, episode.breachId, scope.runId);
  run.log.info({ portfolioId, breachId: episode.breachId, openedOn: episode.openedOn }, 'limit episode retracted');
  if ((await alertedKinds(db, episode.breachId)).size === 0) return 0;
  const input = { portfolioId, limit, breachId: episode.breachId, runId: scope.runId, episode, contributors: [] };
  return (await insertAlert(db, retractionAlert(input))) ? 1 : 0;
}

/** The latest date with a value: an open episode has at least its opening value. */
function lastValue(points: MetricPoint[]): { date: string; value: number } {
  for (let i = points.length - 1; i >= 0; i--) {
    const { date, value } = points[i];
    if (value !== null && Number.isFinite(value)) return { date, value };
  }
  throw new Error('an open episode without any value');
}
