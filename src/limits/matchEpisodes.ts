import type { Episode } from './episodes.ts';

export interface StoredEpisode {
  breachId: number;
  openedOn: string;
  closedOn: string | null;
}

export interface EpisodeMatch<S extends StoredEpisode> {
  derived: Episode;
  /** The recorded episode this one continues (same breach_id), or null: a new episode. */
  stored: S | null;
}

/**
 * Pairs re-derived episodes with recorded ones. A recorded episode still happened if a
 * derived one overlaps its dates (a correction may move its opening or closing by a few
 * days: it keeps its breach_id and its alerts); a recorded one no derived episode
 * overlaps did not happen and is retracted. Greedy in date order, one-to-one.
 */
export function matchEpisodes<S extends StoredEpisode>(
  derived: readonly Episode[],
  stored: readonly S[],
): { matches: EpisodeMatch<S>[]; retracted: S[] } {
  const unmatched = [...stored].sort((a, b) => a.openedOn.localeCompare(b.openedOn));
  const matches = derived.map((d) => {
    const i = unmatched.findIndex((s) => overlaps(d.openedOn, d.closedOn, s.openedOn, s.closedOn));
    const match = i >= 0 ? unmatched.splice(i, 1)[0] : null;
    return { derived: d, stored: match };
  });
  return { matches, retracted: unmatched };
}

/** Date spans [opened, closed]; a null close is still open (runs to the end). */
function overlaps(aOpen: string, aClose: string | null, bOpen: string, bClose: string | null): boolean {
  return (aClose === null || bOpen <= aClose) && (bClose === null || aOpen <= bClose);
}
