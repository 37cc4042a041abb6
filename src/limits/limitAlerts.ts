import { OPEN_AND_USED } from '../checks/suspectStatus.ts';
import type { ResolvedLimit } from '../config/load.ts';
import type { NewAlert } from '../alerts/outbox.ts';
import type { Database } from '../storage/database.ts';
import { levelReachedOn, type Episode, type Transition } from './episodes.ts';
import { isCountMetric } from './applicableLimits.ts';
import { exceptionsLabel, seriesLabel } from '../labels.ts';
import { stateAfter, type EpisodeState } from './toldState.ts';
import { volChangeSentence, type VolChangeFacts } from './volChangeText.ts';

export interface Contributor {
  security_id: string;
  /** In the portfolio; the active weight (portfolio minus benchmark) for a tracking error limit. */
  weight: number | null;
  /** Share of ex-ante volatility (Euler: ccr / vol_ex_ante), or of the tracking error. */
  pct: number;
}

/**
 * The holdings with the largest share of risk on that date (of the tracking error, on
 * active weights, for a tracking error limit); empty when contributions were not kept for it.
 */
export async function topContributors(
  db: Database,
  portfolioId: string,
  limit: ResolvedLimit,
  date: string,
  count = 3,
): Promise<Contributor[]> {
  const [table, weight] = limit.metric === 'tracking_error_ex_ante' ? ['risk_active_contributions', 'active_weight'] : ['risk_contributions', 'weight'];
  return db.all<Contributor>(
    `select security_id, ${weight} as weight, pct from ${table}
     where portfolio_id = $1 and window_days = $2 and estimator = $3 and date = $4::date and pct is not null
     order by pct desc, security_id limit ${count}`,
    [portfolioId, limit.window, limit.estimator, date],
  );
}

/** A flagged price a figure was computed with: open, used (suspect-price mode flag), not yet confirmed or corrected. */
export interface SuspectPrice {
  security_id: string;
  date: string;
  price: number;
  rules: string;
}

/**
 * The open suspect-price flags behind the limit's figure on `date`: none unless its
 * risk_daily row says suspect_price (markSuspectWindows decides which rows do); then the
 * flags, up to that date, on what the portfolio or its benchmark held that day, latest
 * first. An operator told of a breach must see that it may be a data error.
 */
export async function suspectPricesBehind(db: Database, portfolioId: string, limit: ResolvedLimit, date: string, count = 3): Promise<SuspectPrice[]> {
  if (limit.metric === 'backtest_zone') return [];
  return db.all<SuspectPrice>(
    `with figure as (
       select benchmark_id from risk_daily
       where portfolio_id = $1 and date = $2::date and window_days = $3 and estimator = $4 and status like '%suspect_price%'
     ),
     held as (
       select security_id from hold_daily_positions where portfolio_id = $1 and date = $2::date and exists (select 1 from figure)
       union
       select w.security_id from hold_benchmark_weights w join figure f using (benchmark_id) where w.date = $2::date
     )
     select security_id, date::varchar as date, price, rules from price_checks
     where ${OPEN_AND_USED} and date <= $2::date and security_id in (select security_id from held)
     order by date desc, security_id limit ${count}`,
    [portfolioId, date, limit.window, limit.estimator],
  );
}

/** What an alert tells about an episode; a recorded episode (being retracted) has these too. */
export type EpisodeFacts = Pick<Episode, 'openedOn' | 'openLevel' | 'level' | 'escalatedOn' | 'closedOn' | 'peakValue' | 'peakOn'>;

export interface LimitAlertInput {
  portfolioId: string;
  limit: ResolvedLimit;
  breachId: number;
  runId: number;
  episode: EpisodeFacts;
  contributors: Contributor[];
  /** Why the volatility moved since the previous valuation date (vol_ex_ante limits); absent: not said. */
  volChange?: VolChangeFacts | null;
  /** Suspect prices the figure was computed with (suspectPricesBehind); absent: none. */
  suspects?: SuspectPrice[];
}

/** An alert for a dated transition (opened, escalated, closed) of an episode. */
export function transitionAlert(input: LimitAlertInput, t: Transition): NewAlert {
  const { portfolioId, limit, episode } = input;
  const label = `${portfolioId}: ${seriesLabel(limit)} ${fmt(limit, t.value)}`;
  const peak = `peak ${fmt(limit, episode.peakValue)} on ${episode.peakOn}`;
  let text: string;
  if (limit.metric === 'backtest_zone') {
    text = zoneText(portfolioId, limit, t);
  } else if (t.kind === 'limit_opened') {
    text =
      episode.openLevel === 'breach'
        ? `${label} reached its ${fmt(limit, limit.limit)} limit on ${t.date}`
        : `${label} reached its ${fmt(limit, limit.warning)} warning level (limit ${fmt(limit, limit.limit)}) on ${t.date}`;
  } else if (t.kind === 'limit_escalated') {
    text = `${label} reached its ${fmt(limit, limit.limit)} limit on ${t.date} (warning since ${episode.openedOn}, ${peak})`;
  } else {
    text = `${label} is back below ${fmt(limit, limit.clear)} on ${t.date}; the episode since ${episode.openedOn} is closed (${peak})`;
  }
  return buildAlert(input, t.kind, t.date, `${t.kind}-${t.date}`, stateAfter(episode, t), { value: t.value, value_on: t.date }, text);
}

export interface StateChange {
  now: EpisodeState;
  /** What operations were told before, or null: nothing about this episode. */
  told: EpisodeState | null;
  /** Numbers the episode's limit_state alerts, so a state told again after a change gets its own id. */
  sequence: number;
  last: { date: string; value: number | null };
  /** Valuation dates the run covered: how large the catch-up or correction was. */
  datesCovered: number;
}

/**
 * The one alert that brings operations up to date when an episode's current state differs
 * from the last one they were told (a catch-up past a transition, a correction), e.g.
 * "breach since 2026-12-09, caught up from a delivery covering 21 business days".
 */
export function stateAlert(input: LimitAlertInput, change: StateChange): NewAlert {
  const { portfolioId, limit, episode } = input;
  const { now, told, last } = change;
  const value = last.value === null ? '' : ` ${fmt(limit, last.value)} on ${last.date}`;
  const state =
    now.episodeState === 'closed'
      ? `closed on ${episode.closedOn} (episode since ${now.openedOn}, peak ${fmt(limit, episode.peakValue)} on ${episode.peakOn})`
      : `${now.level} since ${levelReachedOn(now.level, now.openedOn, episode.escalatedOn)} (episode opened ${now.openedOn}, ` +
        `peak ${fmt(limit, episode.peakValue)} on ${episode.peakOn})`;
  const before = told === null ? 'not alerted before' : `last told: ${describe(told)}`;
  const text = `${portfolioId}: ${seriesLabel(limit)}${value}: ${state}; ${before}; caught up from a delivery covering ${change.datesCovered} business days`;
  const facts = {
    value: last.value,
    value_on: last.date,
    told_before: told === null ? null : { level: told.level, episode_state: told.episodeState, opened_on: told.openedOn },
    dates_covered: change.datesCovered,
  };
  return buildAlert(input, 'limit_state', last.date, `limit_state-${change.sequence}`, now, facts, text);
}

/** A recorded episode that corrected data no longer show; `episode` is the recorded one. */
export function retractionAlert(input: LimitAlertInput, state: EpisodeState): NewAlert {
  const { portfolioId, limit, episode } = input;
  const text = `${portfolioId}: the ${seriesLabel(limit)} episode recorded from ${episode.openedOn} is withdrawn; corrected data no longer show it`;
  return buildAlert(input, 'limit_retracted', episode.openedOn, `limit_retracted-${episode.openedOn}`, state, { value: null, value_on: null }, text, false);
}

function describe(s: EpisodeState): string {
  return s.episodeState === 'open' ? `${s.level} since ${s.openedOn}` : `episode from ${s.openedOn} ${s.level}`;
}

/** Every limit alert: id `breach-<breach_id>-<what>`, payload with `level` and `episode_state`. */
function buildAlert(
  input: LimitAlertInput,
  kind: NewAlert['kind'],
  asOf: string,
  what: string,
  state: EpisodeState,
  facts: { value: number | null; value_on: string | null } & Record<string, unknown>,
  text: string,
  withContributors = true,
): NewAlert {
  const { portfolioId, limit, episode, contributors } = input;
  const named = withContributors && contributors.length > 0;
  const drivers = named ? `; largest contributors ${contributors.map((c) => `${c.security_id} ${pct(c.pct, 0)}`).join(', ')}` : '';
  const change = withContributors && input.volChange ? input.volChange : null;
  const moved = change ? `. ${volChangeSentence(seriesLabel(limit), change)}` : '';
  const suspects = withContributors ? (input.suspects ?? []) : [];
  const caution = suspects.length > 0 ? suspectClause(suspects) : '';
  return {
    alertId: `breach-${input.breachId}-${what}`,
    kind,
    portfolioId,
    asOf,
    breachId: input.breachId,
    runId: input.runId,
    payload: {
      portfolio: portfolioId,
      metric: limit.metric,
      ...(limit.method === null ? {} : { method: limit.method }),
      window_days: limit.window,
      estimator: limit.estimator,
      level: state.level,
      episode_state: state.episodeState,
      ...(limit.metric === 'backtest_zone' ? { zone: zoneOf(state) } : {}),
      ...facts,
      limit: limit.limit,
      warning: limit.warning,
      clear: limit.clear,
      opened_on: episode.openedOn,
      escalated_on: episode.escalatedOn,
      closed_on: episode.closedOn,
      peak_value: episode.peakValue,
      peak_on: episode.peakOn,
      contributors: withContributors ? contributors : [],
      vol_change: change,
      suspect_prices: suspects,
      text: `${text}${caution}${drivers}${moved}`,
    },
  };
}

/** " (computed with a suspect price, not yet confirmed or corrected: EQ-A 990.1 on 2026-11-30, rules jump, power_of_ten; check the data before acting)". */
function suspectClause(suspects: readonly SuspectPrice[]): string {
  const listed = suspects.map((s) => `${s.security_id} ${s.price} on ${s.date}, rules ${s.rules.split(',').join(', ')}`).join('; ');
  const noun = suspects.length === 1 ? 'a suspect price' : 'suspect prices';
  return ` (computed with ${noun}, not yet confirmed or corrected: ${listed}; check the data before acting)`;
}

/** A limit's figure as text: a fraction as a percentage, a backtest's exceptions as a count. */
function fmt(limit: Pick<ResolvedLimit, 'metric'>, value: number): string {
  return isCountMetric(limit.metric) ? `${exceptionsLabel(value)} in 250 days` : pct(value);
}

/** "acct: the 99% VaR backtest (historical, 250 scenarios) had 5 exceptions in its last 250 tested days on <date>: yellow zone (red from 10)". */
function zoneText(portfolioId: string, limit: ResolvedLimit, t: Transition): string {
  const zone = t.kind === 'limit_closed' ? 'green' : t.value >= limit.limit ? 'red' : 'yellow';
  const bounds = zone === 'red' ? `red from ${limit.limit}` : zone === 'yellow' ? `yellow from ${limit.warning}, red from ${limit.limit}` : `green below ${limit.warning}`;
  return `${portfolioId}: the ${seriesLabel(limit)} had ${exceptionsLabel(t.value)} in its last 250 tested days on ${t.date}: ${zone} zone (${bounds})`;
}

/** The Basel zone a backtest_zone episode's state stands for: open at warning = yellow, at breach = red, else green. */
function zoneOf(state: EpisodeState): string {
  if (state.episodeState !== 'open') return 'green';
  return state.level === 'warning' ? 'yellow' : 'red';
}

function pct(fraction: number, digits = 1): string {
  return `${(fraction * 100).toFixed(digits)}%`;
}
