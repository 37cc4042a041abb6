import { RiskfoldError } from '../errors.ts';
import type { Database } from '../storage/database.ts';

/**
 * Refuses portfolio ids that no positions file has named: on the command line an
 * unknown id is a typo, and an empty answer would hide it.
 */
export async function requireKnownPortfolios(db: Database, ids: readonly string[]): Promise<void> {
  if (ids.length === 0) return;
  const known = (await db.all<{ portfolio_id: string }>('select distinct portfolio_id from positions order by 1')).map((r) => r.portfolio_id);
  const unknown = ids.filter((id) => !known.includes(id));
  if (unknown.length === 0) return;
  const list = known.length === 0 ? 'no positions have been received yet' : `known: ${known.join(', ')}`;
  throw new RiskfoldError('not_found', `no portfolio ${unknown.map((id) => `"${id}"`).join(', ')} in the positions received (${list})`);
}
