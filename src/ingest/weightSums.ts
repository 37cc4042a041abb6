import type { Rejection } from '../errors.ts';
import type { Database } from '../storage/database.ts';

/**
 * A benchmarks file's weights of one benchmark and date are one snapshot of the index,
 * so they add up to 1; a file whose snapshot does not (a constituent left out, a weight
 * in the wrong row) is refused as a whole. The tolerance absorbs the rounding of the
 * published weights (`ingest.benchmarkWeightTolerance`, default 0.01: common practice,
 * no source).
 */

interface Unbalanced {
  benchmark_id: string;
  date: string;
  total: number;
  constituents: number;
  /** The 1-based data row of the snapshot's first constituent. */
  row: number;
}

/** The first snapshot (by its first row) of a relation of typed benchmark rows whose weights miss 1 by more than `tolerance`. */
async function firstUnbalanced(db: Database, relation: string, tolerance: number): Promise<Unbalanced | null> {
  const [hit] = await db.all<Unbalanced>(
    `select benchmark_id, date::varchar as date, sum(weight) as total, count(*)::integer as constituents, (min(rowid) + 1)::integer as row
     from ${relation} group by benchmark_id, date having abs(sum(weight) - 1) > $1 order by row limit 1`,
    [tolerance],
  );
  return hit ?? null;
}

/** Whether some snapshot of the relation misses 1 (the load's check: the diagnosis says which). */
export async function hasUnbalancedWeights(db: Database, relation: string, tolerance: number): Promise<boolean> {
  return (await firstUnbalanced(db, relation, tolerance)) !== null;
}

/** The rejection for the first unbalanced snapshot: file, benchmark, date and the sum; null when every snapshot adds up. */
export async function unbalancedWeightsRejection(db: Database, relation: string, tolerance: number, file: string): Promise<Rejection | null> {
  const hit = await firstUnbalanced(db, relation, tolerance);
  if (hit === null) return null;
  const total = String(Number(hit.total.toPrecision(10)));
  return {
    code: 'weight_sum',
    file,
    row: hit.row,
    column: 'weight',
    value: total,
    expected: `the weights of one benchmark and date adding up to 1 (within ${tolerance})`,
    message: `the ${hit.constituents} weights of benchmark ${JSON.stringify(hit.benchmark_id)} on ${hit.date} add up to ${total}, not 1 (within ${tolerance})`,
  };
}
