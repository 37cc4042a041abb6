import { betaFromProduct } from '../math/activeRisk.ts';
import { eulerContributions, portfolioVolatility } from '../math/contributions.ts';
import type { CovarianceView, Exposure } from './portfolioRow.ts';

/**
 * One portfolio against its benchmark on one date under one covariance estimate: the
 * ex-ante tracking error sqrt(A a'Sa) on the active weights a = w - b, its Euler
 * contributions, and the beta w'Sb / b'Sb. The holdings and the benchmark's constituents
 * are merged by security; base-currency cash has no covariance (as in assessRow). Every
 * other security of either side must be covered by the estimate, else the figures are
 * unknown (NaN): a tracking error that leaves out a constituent would understate it.
 */

/** A benchmark's weights on a date: security indices (sorted) and weights. */
export interface BenchmarkWeights {
  j: Int32Array;
  w: Float64Array;
}

export interface ActiveFigures {
  trackingError: number;
  beta: number;
  /** When asked for: per security of the merged list, cash with 0 contributions. */
  contributions: { j: Int32Array; w: Float64Array; b: Float64Array; mcr: Float64Array; ccr: Float64Array; pct: Float64Array } | null;
}

const UNKNOWN: ActiveFigures = { trackingError: Number.NaN, beta: Number.NaN, contributions: null };

export function assessActive(
  exposure: Exposure,
  benchmark: BenchmarkWeights,
  cov: CovarianceView,
  periodsPerYear: number,
  withContributions: boolean,
): ActiveFigures {
  const merged = mergeBySecurity(exposure, benchmark);
  const risky: number[] = [];
  for (let m = 0; m < merged.j.length; m++) {
    if (exposure.isCash[merged.j[m]] === 1) continue;
    if (!cov.covered(merged.j[m])) return UNKNOWN;
    risky.push(m);
  }
  const idx = Int32Array.from(risky, (m) => merged.j[m]);
  const w = Float64Array.from(risky, (m) => merged.w[m]);
  const b = Float64Array.from(risky, (m) => merged.b[m]);
  const a = Float64Array.from(risky, (_, r) => w[r] - b[r]);
  const sa = idx.length > 0 ? cov.product(idx, a) : new Float64Array(0);
  const sb = idx.length > 0 ? cov.product(idx, b) : new Float64Array(0);
  const beta = betaFromProduct(w, b, sb);
  if (!withContributions) return { trackingError: portfolioVolatility(sa, a, periodsPerYear), beta, contributions: null };

  const euler = eulerContributions(sa, a, periodsPerYear);
  const n = merged.j.length;
  // cash: no covariance, so no contribution (its share is undefined when TE is 0)
  const mcr = new Float64Array(n);
  const ccr = new Float64Array(n);
  const pct = new Float64Array(n).fill(euler.vol > 0 ? 0 : Number.NaN);
  risky.forEach((m, r) => {
    mcr[m] = euler.mcr[r];
    ccr[m] = euler.ccr[r];
    pct[m] = euler.pct[r];
  });
  return { trackingError: euler.vol, beta, contributions: { ...merged, mcr, ccr, pct } };
}

/** Holdings and constituents merged by security index (both lists sorted), 0 where a side lacks it. */
function mergeBySecurity(exposure: Exposure, benchmark: BenchmarkWeights): { j: Int32Array; w: Float64Array; b: Float64Array } {
  const j: number[] = [];
  const w: number[] = [];
  const b: number[] = [];
  let x = 0;
  let y = 0;
  while (x < exposure.j.length || y < benchmark.j.length) {
    const jx = x < exposure.j.length ? exposure.j[x] : Number.POSITIVE_INFINITY;
    const jy = y < benchmark.j.length ? benchmark.j[y] : Number.POSITIVE_INFINITY;
    const k = Math.min(jx, jy);
    j.push(k);
    w.push(jx === k ? exposure.w[x++] : 0);
    b.push(jy === k ? benchmark.w[y++] : 0);
  }
  return { j: Int32Array.from(j), w: Float64Array.from(w), b: Float64Array.from(b) };
}
