import type { Database } from '../storage/database.ts';
import type { Transition } from './episodes.ts';
import type { EpisodeFacts } from './limitAlerts.ts';

/**
 * What operations were told about an episode, compared with what is true now. An
 * episode's state is whether it is open, its level and its opening date: a change of any
 * of them (a catch-up past an escalation, a correction moving the opening, a closing or a
 * reopening) is something the receiver must learn; a moved peak or closing date is not.
 */
export interface EpisodeState {
  episodeState: 'open' | 'closed';
  level: 'warning' | 'breach' | 'closed' | 'retracted';
  openedOn: string;
}

export interface ToldState extends EpisodeState {
  alertId: string;
  /** limit_state alerts raised for the episode so far; the next one's id counts on. */
  stateAlerts: number;
}

/** The state an episode is in at the end of the replay. */
export function currentState(episode: Pick<EpisodeFacts, 'openedOn' | 'level' | 'closedOn'>): EpisodeState {
  if (episode.closedOn !== null) return { episodeState: 'closed', level: 'closed', openedOn: episode.openedOn };
  return { episodeState: 'open', level: episode.level, openedOn: episode.openedOn };
}

/** The state a transition alert describes. */
export function stateAfter(episode: Pick<EpisodeFacts, 'openedOn' | 'openLevel'>, t: Pick<Transition, 'kind'>): EpisodeState {
  if (t.kind === 'limit_closed') return { episodeState: 'closed', level: 'closed', openedOn: episode.openedOn };
  return { episodeState: 'open', level: t.kind === 'limit_escalated' ? 'breach' : episode.openLevel, openedOn: episode.openedOn };
}

export function retractedState(openedOn: string): EpisodeState {
  return { episodeState: 'closed', level: 'retracted', openedOn };
}

export function sameState(a: EpisodeState, b: EpisodeState): boolean {
  return a.episodeState === b.episodeState && a.level === b.level && a.openedOn === b.openedOn;
}

/** The told state of each given episode that was ever alerted. */
export async function loadToldStates(db: Database, breachIds: readonly number[]): Promise<Map<number, ToldState>> {
  if (breachIds.length === 0) return new Map();
  const rows = await db.all<{ breach_id: number; episode_state: EpisodeState['episodeState']; level: EpisodeState['level']; opened_on: string; alert_id: string; state_alerts: number }>(
    `select breach_id, episode_state, level, opened_on::varchar as opened_on, alert_id, state_alerts from limit_told_state
     where list_contains(from_json($1, '["INTEGER"]'), breach_id)`,
    [JSON.stringify(breachIds)],
  );
  return new Map(
    rows.map((r) => [r.breach_id, { episodeState: r.episode_state, level: r.level, openedOn: r.opened_on, alertId: r.alert_id, stateAlerts: r.state_alerts }]),
  );
}

/** Records what the alerts of this run told, in the run's transaction. */
export async function saveToldStates(db: Database, told: ReadonlyMap<number, ToldState>): Promise<void> {
  for (const [breachId, s] of told) {
    await db.run(
      `insert or replace into limit_told_state (breach_id, episode_state, level, opened_on, alert_id, state_alerts)
       values ($1, $2, $3, $4::date, $5, $6)`,
      [breachId, s.episodeState, s.level, s.openedOn, s.alertId, s.stateAlerts],
    );
  }
}
