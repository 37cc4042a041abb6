import type { Config } from '../config/load.ts';
import { RiskfoldError } from '../errors.ts';
import type { Database } from '../storage/database.ts';

/**
 * The portfolio ids the positions received name, sorted: from the snapshots (one row per
 * portfolio and date), not the raw positions, which every limit check would otherwise
 * scan whole (0.44 s on the large bench's 26 million rows, 0.02 s from the snapshots).
 */
async function knownPortfolios(db: Database): Promise<string[]> {
  return (await db.all<{ portfolio_id: string }>('select distinct portfolio_id from clean_snapshots order by 1')).map((r) => r.portfolio_id);
}

/**
 * Refuses portfolio ids that no positions file has named: on the command line an
 * unknown id is a typo, and an empty answer would hide it.
 */
export async function requireKnownPortfolios(db: Database, ids: readonly string[]): Promise<void> {
  if (ids.length === 0) return;
  const known = await knownPortfolios(db);
  const unknown = ids.filter((id) => !known.includes(id));
  if (unknown.length === 0) return;
  const list = known.length === 0 ? 'no positions have been received yet' : `known: ${known.join(', ')}`;
  throw new RiskfoldError('not_found', `no portfolio ${unknown.map((id) => `"${id}"`).join(', ')} in the positions received (${list})`);
}

/** A limit set on a portfolio id that no positions file has named. */
export interface LimitOnUnknownPortfolio {
  portfolio: string;
  metric: string;
  window: number;
  /** The portfolio ids the positions received do name. */
  known: string[];
}

/**
 * The limits that watch nothing: set on a portfolio id no positions file has named ("*"
 * always applies). A typo in the config ("P-1" for "P1") would otherwise leave the
 * intended portfolio unwatched without a word: `status` lists them first and every limit
 * check logs them. None while no positions have arrived at all.
 */
export async function limitsOnUnknownPortfolios(db: Database, config: Config): Promise<LimitOnUnknownPortfolio[]> {
  const named = config.limits.filter((l) => l.portfolio !== '*');
  if (named.length === 0) return [];
  const known = await knownPortfolios(db);
  if (known.length === 0) return [];
  return named.filter((l) => !known.includes(l.portfolio)).map((l) => ({ portfolio: l.portfolio, metric: l.metric, window: l.window, known }));
}
