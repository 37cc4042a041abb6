import { requireInteger, requireLength, requirePositive } from './checks.ts';
import { eulerContributions, type EulerContributions } from './contributions.ts';
import { matrixVector } from './covariance.ts';
import { sampleStdDev } from './moments.ts';

/**
 * Risk relative to a benchmark. w the portfolio's weights, b the benchmark's, over the
 * same securities in the same order (a security in only one of them has weight 0 in the
 * other), S the daily covariance (n x n, row-major), A the periods per year.
 */

/**
 * Ex-ante tracking error sqrt(A (w - b)' S (w - b)) with its Euler contributions on the
 * active weights a = w - b: the ccr_i = a_i A (S a)_i / TE add up to the tracking error
 * (as the absolute contributions add up to the volatility; R. Litterman, "Hot Spots and
 * Hedges", Goldman Sachs Risk Management Series, 1996, from memory). The `vol` of the
 * result is the tracking error. A portfolio equal to its benchmark has TE 0.
 */
export function activeContributions(s: Float64Array, n: number, w: Float64Array, b: Float64Array, periodsPerYear: number): EulerContributions {
  const active = activeWeights('activeContributions', n, w, b);
  return eulerContributions(matrixVector(s, n, active), active, periodsPerYear);
}

/**
 * Beta of the portfolio to its benchmark, w'Sb / b'Sb: the slope of the regression of
 * the portfolio's return on the benchmark's under S (W. F. Sharpe, 1964; common
 * practice). NaN for a riskless benchmark (b'Sb = 0), where the slope is undefined.
 */
export function betaToBenchmark(s: Float64Array, n: number, w: Float64Array, b: Float64Array): number {
  activeWeights('betaToBenchmark', n, w, b);
  return betaFromProduct(w, b, matrixVector(s, n, b));
}

/**
 * The beta of `betaToBenchmark` from Sb (daily) instead of S, so an estimator that gives
 * products without forming S serves it: w'(Sb) / b'(Sb).
 */
export function betaFromProduct(w: Float64Array, b: Float64Array, sb: Float64Array): number {
  const n = w.length;
  requireLength('betaFromProduct', 'b', b.length, n);
  requireLength('betaFromProduct', 'sb', sb.length, n);
  let covariance = 0;
  let variance = 0;
  for (let i = 0; i < n; i++) {
    covariance += w[i] * sb[i];
    variance += b[i] * sb[i];
  }
  return variance > 0 ? covariance / variance : Number.NaN;
}

/**
 * Realized tracking error sqrt(A) x the sample standard deviation of the active log
 * return r_p,t - r_b,t over the window (SPEC section 9). Throws for fewer than 2 dates
 * and for a missing return: a gap must be resolved before, not read as zero.
 */
export function realizedTrackingError(portfolio: Float64Array, benchmark: Float64Array, periodsPerYear: number): number {
  const fn = 'realizedTrackingError';
  requireLength(fn, 'benchmark', benchmark.length, portfolio.length);
  requireInteger(fn, 'portfolio.length', portfolio.length, 2);
  requirePositive(fn, 'periodsPerYear', periodsPerYear);
  const active = new Float64Array(portfolio.length);
  for (let t = 0; t < portfolio.length; t++) {
    active[t] = portfolio[t] - benchmark[t];
    if (!Number.isFinite(active[t])) throw new Error(`${fn}: the returns of date ${t} must be finite, got ${portfolio[t]} and ${benchmark[t]}`);
  }
  return Math.sqrt(periodsPerYear) * sampleStdDev(active);
}

function activeWeights(fn: string, n: number, w: Float64Array, b: Float64Array): Float64Array {
  requireInteger(fn, 'n', n, 1);
  requireLength(fn, 'w', w.length, n);
  requireLength(fn, 'b', b.length, n);
  const active = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    active[i] = w[i] - b[i];
    if (!Number.isFinite(active[i])) throw new Error(`${fn}: weights of security ${i} must be finite, got ${w[i]} and ${b[i]}`);
  }
  return active;
}
