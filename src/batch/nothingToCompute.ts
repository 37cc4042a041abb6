import type { Database } from '../storage/database.ts';
import type { RecomputeScope } from './recomputeScope.ts';

/**
 * Why a batch's scope has nothing to compute, in one plain sentence, or null when it has
 * something. A valuation date needs a price, so a scope starting after the last priced
 * date (positions or fx for a day whose prices have not come yet) has no date to compute.
 */
export async function nothingToCompute(db: Database, scope: RecomputeScope): Promise<string | null> {
  const [{ last }] = await db.all<{ last: string | null }>(`select strftime(max(date), '%Y-%m-%d') as last from prices`);
  if (last === null) return 'nothing to compute: no prices loaded yet';
  if (scope.from !== null && scope.from > last) {
    return `nothing to compute: the files start on ${scope.from}, after the last priced date ${last}; risk follows when prices for those dates arrive`;
  }
  return null;
}
