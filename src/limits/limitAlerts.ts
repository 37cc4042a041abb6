import type { ResolvedLimit } from '../config/load.ts';
import type { NewAlert } from '../alerts/outbox.ts';
import type { Database } from '../storage/database.ts';
import type { Episode, Transition } from './episodes.ts';
import { volChangeSentence, type VolChangeFacts } from './volChangeText.ts';

export interface Contributor {
  security_id: string;
  weight: number | null;
  /** Share of ex-ante volatility (Euler: ccr / vol_ex_ante). */
  pct: number;
}

/** The holdings with the largest share of risk on that date; empty when contributions were not kept for it. */
export async function topContributors(
  db: Database,
  portfolioId: string,
  limit: ResolvedLimit,
  date: string,
  count = 3,
): Promise<Contributor[]> {
  return db.all<Contributor>(
    `select security_id, weight, pct from risk_contributions
     where portfolio_id = $1 and window_days = $2 and estimator = $3 and date = $4::date and pct is not null
     order by pct desc, security_id limit ${count}`,
    [portfolioId, limit.window, limit.estimator, date],
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
}

/** An alert for a dated transition (opened, escalated, closed) of an episode. */
export function transitionAlert(input: LimitAlertInput, t: Transition): NewAlert {
  const { portfolioId, limit, episode } = input;
  const label = `${portfolioId}: ${metricLabel(limit)} ${pct(t.value)}`;
  const peak = `peak ${pct(episode.peakValue)} on ${episode.peakOn}`;
  let text: string;
  let level = episode.level;
  if (t.kind === 'limit_opened') {
    level = episode.openLevel;
    text =
      level === 'breach'
        ? `${label} reached its ${pct(limit.limit)} limit on ${t.date}`
        : `${label} reached its ${pct(limit.warning)} warning level (limit ${pct(limit.limit)}) on ${t.date}`;
  } else if (t.kind === 'limit_escalated') {
    level = 'breach';
    text = `${label} reached its ${pct(limit.limit)} limit on ${t.date} (warning since ${episode.openedOn}, ${peak})`;
  } else {
    text = `${label} is back below ${pct(limit.clear)} on ${t.date}; the episode since ${episode.openedOn} is closed (${peak})`;
  }
  return buildAlert(input, t.kind, t.date, { level, value: t.value, value_on: t.date }, text);
}

/**
 * The one alert for an episode still open at the end of a run over past dates whose
 * transitions were all too old to alert: kind limit_opened, flagged late.
 */
export function lateOpenAlert(input: LimitAlertInput, asOf: string, last: { date: string; value: number }): NewAlert {
  const { portfolioId, limit, episode } = input;
  const level = episode.level === 'breach' ? `its ${pct(limit.limit)} limit` : `its ${pct(limit.warning)} warning level`;
  const text =
    `${portfolioId}: ${metricLabel(limit)} ${pct(last.value)} has been at or above ${level} since ${episode.openedOn} ` +
    `(peak ${pct(episode.peakValue)} on ${episode.peakOn}); found by a run over past dates`;
  return buildAlert(input, 'limit_opened', asOf, { level: episode.level, value: last.value, value_on: last.date, late: true }, text);
}

/** A recorded episode that corrected data no longer show; `episode` is the recorded one. */
export function retractionAlert(input: LimitAlertInput): NewAlert {
  const { portfolioId, limit, episode } = input;
  const text = `${portfolioId}: the ${metricLabel(limit)} episode recorded from ${episode.openedOn} is withdrawn; corrected data no longer show it`;
  return buildAlert(input, 'limit_retracted', episode.openedOn, { level: episode.level, value: null, value_on: null }, text, false);
}

function buildAlert(
  input: LimitAlertInput,
  kind: NewAlert['kind'],
  asOf: string,
  facts: { level: string; value: number | null; value_on: string | null; late?: boolean },
  text: string,
  withContributors = true,
): NewAlert {
  const { portfolioId, limit, episode, contributors } = input;
  const named = withContributors && contributors.length > 0;
  const drivers = named ? `; largest contributors ${contributors.map((c) => `${c.security_id} ${pct(c.pct, 0)}`).join(', ')}` : '';
  const change = withContributors && input.volChange ? input.volChange : null;
  const moved = change ? `. ${volChangeSentence(metricLabel(limit), change)}` : '';
  return {
    alertId: `breach-${input.breachId}-${kind}-${asOf}`,
    kind,
    portfolioId,
    asOf,
    breachId: input.breachId,
    runId: input.runId,
    payload: {
      portfolio: portfolioId,
      metric: limit.metric,
      window_days: limit.window,
      estimator: limit.estimator,
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
      text: `${text}${drivers}${moved}`,
    },
  };
}

/** "63-day volatility", "EWMA realized volatility", "63-day 99% 1-day VaR (of value)". */
export function metricLabel(limit: Pick<ResolvedLimit, 'metric' | 'window' | 'estimator'>): string {
  const span = limit.estimator === 'ewma' ? 'EWMA' : `${limit.window}-day`;
  if (limit.metric === 'vol_realized') return `${span} realized volatility`;
  if (limit.metric === 'var_99_1d') return `${span} 99% 1-day VaR (of value)`;
  return `${span} volatility`;
}

function pct(fraction: number, digits = 1): string {
  return `${(fraction * 100).toFixed(digits)}%`;
}
