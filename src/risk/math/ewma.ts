import { requireIndices, requireInteger, requireLength, requireNonNegative, requireOpenUnit } from './checks.ts';

/**
 * Exponentially weighted (EWMA) variance and covariance with zero mean:
 * sigma_n^2 = lambda sigma_{n-1}^2 + (1 - lambda) u_{n-1}^2, which weights the return
 * k days back by (1 - lambda) lambda^k (weights that add up to 1 over an infinite
 * history). J.P. Morgan/Reuters, RiskMetrics Technical Document, 4th ed. (1996),
 * chapter 5; J. C. Hull, Options, Futures, and Other Derivatives, chapter on
 * estimating volatilities and correlations.
 */

/** Decay factor for daily data chosen in the RiskMetrics Technical Document (1996), chapter 5 (0.97 for monthly; from memory). */
export const RISKMETRICS_DAILY_LAMBDA = 0.94;

/** sigma_n^2 = lambda sigma_{n-1}^2 + (1 - lambda) u_{n-1}^2. */
export function ewmaVarianceUpdate(prevVariance: number, prevReturn: number, lambda: number): number {
  requireOpenUnit('ewmaVarianceUpdate', 'lambda', lambda);
  requireNonNegative('ewmaVarianceUpdate', 'prevVariance', prevVariance);
  if (!Number.isFinite(prevReturn)) throw new Error(`ewmaVarianceUpdate: prevReturn must be finite, got ${prevReturn}`);
  return lambda * prevVariance + (1 - lambda) * prevReturn * prevReturn;
}

/** S_t = lambda S_{t-1} + (1 - lambda) r r' for an n x n row-major S; returns a new matrix. */
export function ewmaCovarianceUpdate(s: Float64Array, n: number, r: Float64Array, lambda: number): Float64Array {
  const next = Float64Array.from(s);
  ewmaCovarianceUpdateInPlace(next, n, r, lambda);
  return next;
}

/**
 * As `ewmaCovarianceUpdate`, overwriting `s` (the stage updates one matrix per date).
 * With `active`, only rows and columns j with active[j] = 1 are updated: a security
 * without a return today keeps yesterday's variance and covariances instead of
 * decaying towards zero, and its r[j] is not read (it may be NaN). S is taken as
 * symmetric: the upper triangle is read and written to both halves.
 */
export function ewmaCovarianceUpdateInPlace(
  s: Float64Array,
  n: number,
  r: Float64Array,
  lambda: number,
  active?: Uint8Array,
): void {
  const fn = 'ewmaCovarianceUpdateInPlace';
  requireOpenUnit(fn, 'lambda', lambda);
  requireInteger(fn, 'n', n, 1);
  requireLength(fn, 's', s.length, n * n);
  requireLength(fn, 'r', r.length, n);
  if (active !== undefined) requireLength(fn, 'active', active.length, n);
  for (let j = 0; j < n; j++) {
    if ((active === undefined || active[j] === 1) && !Number.isFinite(r[j])) {
      throw new Error(`${fn}: r[${j}] = ${r[j]} is not finite (mark it inactive instead)`);
    }
  }
  const live = new Int32Array(n);
  let liveCount = 0;
  for (let j = 0; j < n; j++) if (active === undefined || active[j] === 1) live[liveCount++] = j;
  ewmaUpperUpdateInPlace(s, n, r, lambda, live.subarray(0, liveCount));
  // mirrored, so S stays exactly symmetric
  for (let a = 0; a < liveCount; a++) {
    for (let b = a + 1; b < liveCount; b++) s[live[b] * n + live[a]] = s[live[a] * n + live[b]];
  }
}

/**
 * The same update on the upper triangle only (entries S_ij with i <= j), for the
 * securities listed in `live` (strictly ascending, each with a finite return): one
 * contiguous pass over each row, where mirroring into the lower triangle would write a
 * column at a time. Callers that keep S this way read it with `upperSubMatrixVector`.
 */
export function ewmaUpperUpdateInPlace(u: Float64Array, n: number, r: Float64Array, lambda: number, live: Int32Array): void {
  const fn = 'ewmaUpperUpdateInPlace';
  requireOpenUnit(fn, 'lambda', lambda);
  requireInteger(fn, 'n', n, 1);
  requireLength(fn, 'u', u.length, n * n);
  requireLength(fn, 'r', r.length, n);
  requireIndices(fn, 'live', live, n);
  for (let a = 0; a < live.length; a++) {
    if (a > 0 && live[a] <= live[a - 1]) throw new Error(`${fn}: live must be strictly ascending, live[${a}] = ${live[a]} after ${live[a - 1]}`);
    if (!Number.isFinite(r[live[a]])) throw new Error(`${fn}: r[${live[a]}] = ${r[live[a]]} is not finite (leave it out of live instead)`);
  }
  const gain = 1 - lambda;
  const k = live.length;
  for (let a = 0; a < k; a++) {
    const i = live[a];
    const ri = gain * r[i];
    const base = i * n;
    for (let b = a; b < k; b++) {
      const j = live[b];
      u[base + j] = lambda * u[base + j] + ri * r[j];
    }
  }
}
