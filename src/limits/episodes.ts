/**
 * The limit episode state machine (SPEC section 6), pure: no database, no clock.
 *
 * An episode opens on the first date the metric reaches `warning` (level warning) or
 * `limit` (level breach), escalates from warning to breach on the first date it reaches
 * `limit`, never de-escalates, and closes on the first date the metric is below `clear`.
 * The band between clear and warning is hysteresis: inside it nothing changes, so a
 * metric hovering around one level does not open and close an episode every day.
 * A date without a value (history too short, coverage too low) holds the state.
 */

export type LimitLevel = 'warning' | 'breach';

export interface LimitLevels {
  limit: number;
  warning: number;
  clear: number;
}

export interface MetricPoint {
  /** 'YYYY-MM-DD' */
  date: string;
  value: number | null;
}

export interface Episode {
  openedOn: string;
  openValue: number;
  /** The level the episode opened at; `level` is where it ended up. */
  openLevel: LimitLevel;
  level: LimitLevel;
  escalatedOn: string | null;
  escalateValue: number | null;
  closedOn: string | null;
  closeValue: number | null;
  peakValue: number;
  peakOn: string;
}

/**
 * Replays the state machine over `points` (ascending, one per date), starting with no
 * episode open. Returns every episode in date order, the last one possibly still open.
 */
export function replayEpisodes(points: readonly MetricPoint[], levels: LimitLevels): Episode[] {
  if (!(levels.clear < levels.warning && levels.warning <= levels.limit)) {
    throw new Error(`limit levels need clear < warning <= limit, got ${levels.clear}, ${levels.warning}, ${levels.limit}`);
  }
  const episodes: Episode[] = [];
  let open: Episode | null = null;
  let previousDate = '';
  for (const { date, value } of points) {
    if (date <= previousDate) throw new Error(`metric points must be in ascending date order: ${date} after ${previousDate}`);
    previousDate = date;
    if (value === null || !Number.isFinite(value)) continue;
    if (open === null) {
      if (value >= levels.warning) {
        const level: LimitLevel = value >= levels.limit ? 'breach' : 'warning';
        open = {
          openedOn: date,
          openValue: value,
          openLevel: level,
          level,
          escalatedOn: null,
          escalateValue: null,
          closedOn: null,
          closeValue: null,
          peakValue: value,
          peakOn: date,
        };
        episodes.push(open);
      }
      continue;
    }
    if (value < levels.clear) {
      open.closedOn = date;
      open.closeValue = value;
      open = null;
      continue;
    }
    if (value > open.peakValue) {
      open.peakValue = value;
      open.peakOn = date;
    }
    if (open.level === 'warning' && value >= levels.limit) {
      open.level = 'breach';
      open.escalatedOn = date;
      open.escalateValue = value;
    }
  }
  return episodes;
}

/**
 * The date an open episode reached the level it is at: a breach since its escalation (its
 * opening, when it opened at the limit), a warning since its opening. `status`, the state
 * alerts and the report all date an episode by this.
 */
export function levelReachedOn(level: string, openedOn: string, escalatedOn: string | null): string {
  return level === 'breach' ? (escalatedOn ?? openedOn) : openedOn;
}

export type TransitionKind = 'limit_opened' | 'limit_escalated' | 'limit_closed';

export interface Transition {
  kind: TransitionKind;
  date: string;
  value: number;
}

/** The dated transitions of one episode, in order: opening, escalation, closing. */
export function transitionsOf(episode: Episode): Transition[] {
  const out: Transition[] = [{ kind: 'limit_opened', date: episode.openedOn, value: episode.openValue }];
  if (episode.escalatedOn !== null && episode.escalateValue !== null) {
    out.push({ kind: 'limit_escalated', date: episode.escalatedOn, value: episode.escalateValue });
  }
  if (episode.closedOn !== null && episode.closeValue !== null) {
    out.push({ kind: 'limit_closed', date: episode.closedOn, value: episode.closeValue });
  }
  return out;
}
