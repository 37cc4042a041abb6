import type { Logger } from 'pino';
import type { Config, ResolvedLimit } from '../config/load.ts';
import { insertAlert } from '../alerts/outbox.ts';
import type { Database } from '../storage/database.ts';
import { limitsOnUnknownPortfolios } from '../read/portfolios.ts';
import { applicableLimits, limitKey } from './applicableLimits.ts';
import {
  alertedKinds,
  lastClearDates,
  loadEpisodesInScope,
  loadMetricSeries,
  retractEpisodes,
  saveEpisodes,
  seriesKey,
  type EpisodeWrite,
  type RecordedEpisode,
} from './breachStore.ts';
import { replayEpisodes, transitionsOf, type Episode, type MetricPoint } from './episodes.ts';
import { retractionAlert, stateAlert, suspectPricesBehind, topContributors, transitionAlert } from './limitAlerts.ts';
import { matchEpisodes } from './matchEpisodes.ts';
import { currentState, loadToldStates, retractedState, sameState, saveToldStates, stateAfter, type ToldState } from './toldState.ts';
import { volChangeOn } from './volChangeText.ts';

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
 * with limit_breaches; new transitions go to the alerts outbox, and every episode whose
 * current state differs from what operations were last told gets one limit_state alert. Runs inside the risk
 * stage's transaction (it begins and commits nothing itself), after the run's
 * risk_daily rows are written, so episodes and alerts commit together with the risk.
 * Reads in bulk (one query per watched series for all portfolios), replays in memory,
 * writes the episodes set-based; only the alerts, a few per run, go one by one.
 */
export async function checkLimits(db: Database, config: Config, log: Logger, scope: LimitScope): Promise<LimitOutcome> {
  const stageLog = log.child({ stage: 'limits', runId: scope.runId });
  const outcome: LimitOutcome = { alertsRaised: 0, openEpisodes: 0 };
  if (config.limits.length === 0) return outcome;
  for (const l of await limitsOnUnknownPortfolios(db, config)) {
    stageLog.warn({ portfolio: l.portfolio, metric: l.metric, window: l.window, known: l.known }, 'a limit is set on a portfolio no positions name: it watches nothing (a typo in the config?)');
  }
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
  // last date before `from` whose figure was below the clear level (lastClearDates). The
  // dates before `from` are unchanged, so an episode open at `from` is re-derived exactly
  // up to it and continued; one a previous run could not see (a limit added since) is
  // found too, as the date comes from the figures, not from the recorded episodes.
  const pairs = portfolios.flatMap(({ portfolio_id: portfolioId }) => applicableLimits(config.limits, portfolioId).map((limit) => ({ portfolioId, limit })));
  const starts = scope.from === null ? new Map<string, string>() : await replayStarts(db, pairs, scope.from);
  const watched = pairs.map((w) => ({ ...w, replayFrom: starts.get(seriesKey(w.portfolioId, w.limit)) ?? null }));
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
  const retractedIds = replayed.flatMap((r) => r.retracted.map((e) => e.breachId));
  await retractEpisodes(db, retractedIds, scope.runId);
  const toldBefore = await loadToldStates(db, [...breachIds, ...retractedIds]);
  const toldNow = new Map<number, ToldState>();

  let written = 0;
  for (const r of replayed) {
    for (const { derived: episode } of r.matches) {
      const breachId = breachIds[written++];
      const told = toldBefore.get(breachId) ?? null;
      const after = await alertEpisode(db, r, episode, breachId, alerted.get(breachId) ?? new Set(), told, alertFrom, scope);
      if (after !== null) {
        toldNow.set(breachId, after.told);
        outcome.alertsRaised += after.raised;
      }
    }
    for (const episode of r.retracted) {
      stageLog.info({ portfolioId: r.portfolioId, breachId: episode.breachId, openedOn: episode.openedOn }, 'limit episode retracted');
      // tell operations only if they had been told of it
      const told = toldBefore.get(episode.breachId);
      const state = retractedState(episode.openedOn);
      if (told === undefined || sameState(told, state)) continue;
      const alert = retractionAlert({ portfolioId: r.portfolioId, limit: r.limit, breachId: episode.breachId, runId: scope.runId, episode, contributors: [] }, state);
      if (!(await insertAlert(db, alert))) continue;
      toldNow.set(episode.breachId, { ...state, alertId: alert.alertId, stateAlerts: told.stateAlerts });
      outcome.alertsRaised++;
    }
  }
  await saveToldStates(db, toldNow);
  stageLog.info(outcome, 'limits checked');
  return outcome;
}

/** By seriesKey, where each (portfolio, limit) replays from: lastClearDates, one query per watched figure and clear level. */
async function replayStarts(db: Database, pairs: { portfolioId: string; limit: ResolvedLimit }[], from: string): Promise<Map<string, string>> {
  const groups = new Map<string, { limit: ResolvedLimit; portfolios: string[] }>();
  for (const { portfolioId, limit } of pairs) {
    const key = `${limitKey(limit)}|${limit.clear}`;
    (groups.get(key) ?? groups.set(key, { limit, portfolios: [] }).get(key)!).portfolios.push(portfolioId);
  }
  const starts = new Map<string, string>();
  for (const { limit, portfolios } of groups.values()) {
    for (const [portfolioId, date] of await lastClearDates(db, limit, limit.clear, portfolios, from)) starts.set(seriesKey(portfolioId, limit), date);
  }
  return starts;
}

/**
 * Alerts the episode's transitions not alerted before and recent enough (older ones are
 * superseded history), then, if what operations were told still differs from the
 * episode's current state, one limit_state alert with the current state. An episode
 * never alerted and already closed stays quiet: it is history, not a state to act on.
 * Returns what operations now know and how many alerts said it; null: nothing raised.
 */
async function alertEpisode(
  db: Database,
  r: Replayed,
  episode: Episode,
  breachId: number,
  already: Set<string>,
  toldBefore: ToldState | null,
  alertFrom: string,
  scope: LimitScope,
): Promise<{ told: ToldState; raised: number } | null> {
  const { portfolioId, limit, points } = r;
  // what the alert of a date tells: the largest contributors, why the figure moved since the date before, suspect prices behind it
  const input = async (date: string) => ({
    portfolioId,
    limit,
    breachId,
    runId: scope.runId,
    episode,
    contributors: await topContributors(db, portfolioId, limit, date),
    volChange: await volChangeOn(db, portfolioId, limit, date),
    suspects: await suspectPricesBehind(db, portfolioId, limit, date),
  });
  let told = toldBefore;
  let raised = 0;
  for (const t of transitionsOf(episode).filter((t) => !already.has(t.kind) && t.date >= alertFrom)) {
    const alert = transitionAlert(await input(t.date), t);
    if (!(await insertAlert(db, alert))) continue;
    told = { ...stateAfter(episode, t), alertId: alert.alertId, stateAlerts: told?.stateAlerts ?? 0 };
    raised++;
  }
  const now = currentState(episode);
  const outdated = told === null ? now.episodeState === 'open' : !sameState(told, now);
  if (outdated) {
    const last = lastValue(points);
    const sequence = (told?.stateAlerts ?? 0) + 1;
    const datesCovered = points.filter((p) => scope.from === null || p.date >= scope.from).length;
    const alert = stateAlert(await input(last.date), { now, told, sequence, last, datesCovered });
    if (await insertAlert(db, alert)) {
      told = { ...now, alertId: alert.alertId, stateAlerts: sequence };
      raised++;
    }
  }
  return raised === 0 || told === null ? null : { told, raised };
}

/** The latest date with a value: an episode has at least its opening value. */
function lastValue(points: MetricPoint[]): { date: string; value: number } {
  for (let i = points.length - 1; i >= 0; i--) {
    const { date, value } = points[i];
    if (value !== null && Number.isFinite(value)) return { date, value };
  }
  throw new Error('an episode without any value');
}
