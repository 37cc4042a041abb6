import { createRandom, type Random } from '../../../src/demo/random.ts';

/**
 * Shared data for the math tests: seeded random return matrices (row-major, rows =
 * dates, cols = securities) with a common factor so the columns are correlated, as
 * daily returns are.
 */

export { createRandom, type Random };

export interface ReturnOptions {
  /** Daily standard deviation, e.g. 0.01. */
  scale: number;
  /** Level added to every value: a large one (0.5) stresses cancellation in the sums. */
  offset?: number;
}

export function randomReturns(random: Random, rows: number, cols: number, options: ReturnOptions): Float64Array {
  const x = new Float64Array(rows * cols);
  const offset = options.offset ?? 0;
  for (let t = 0; t < rows; t++) {
    const market = random.normal();
    for (let j = 0; j < cols; j++) {
      const loading = 0.3 + (0.6 * j) / Math.max(1, cols - 1);
      x[t * cols + j] = offset + options.scale * (loading * market + Math.sqrt(1 - loading * loading) * random.normal());
    }
  }
  return x;
}

export function randomWeights(random: Random, n: number): Float64Array {
  const w = new Float64Array(n);
  for (let j = 0; j < n; j++) w[j] = random.uniform() - 0.3;
  return w;
}

/** Column j of a row-major rows x cols matrix, as a plain array (simple-statistics takes arrays). */
export function column(x: Float64Array, rows: number, cols: number, j: number): number[] {
  const out: number[] = [];
  for (let t = 0; t < rows; t++) out.push(x[t * cols + j]);
  return out;
}

/** Rows rowStart.. of a row-major matrix with `stride` columns, keeping only `cols`. */
export function pickColumns(x: Float64Array, rowStart: number, rowCount: number, stride: number, cols: ArrayLike<number>): Float64Array {
  const out = new Float64Array(rowCount * cols.length);
  for (let t = 0; t < rowCount; t++) {
    for (let a = 0; a < cols.length; a++) out[t * cols.length + a] = x[(rowStart + t) * stride + cols[a]];
  }
  return out;
}

/** Largest |a_i - b_i| / max(|b_i|, floor): relative, but not blown up by entries near zero. */
export function maxRelativeError(a: ArrayLike<number>, b: ArrayLike<number>, floor: number): number {
  if (a.length !== b.length) throw new Error(`lengths differ: ${a.length} vs ${b.length}`);
  let worst = 0;
  for (let i = 0; i < a.length; i++) worst = Math.max(worst, Math.abs(a[i] - b[i]) / Math.max(Math.abs(b[i]), floor));
  return worst;
}
