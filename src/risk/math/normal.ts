import { requireOpenUnit } from './checks.ts';

/**
 * The standard normal distribution: density, distribution function and quantile, to
 * about 1e-15 relative (a few units in the last place), without tables of constants
 * beyond the quantile's starting guess.
 */

const SQRT_2PI = Math.sqrt(2 * Math.PI);
/**
 * Below this |x| the Taylor series, above it the continued fraction. The series loses
 * relative accuracy in the lower tail by cancellation against 1/2 (1e-13 at x = -3),
 * the fraction needs more terms as x falls; at 1 both are within 1e-15.
 */
const SERIES_LIMIT = 1;

/**
 * phi(x) = exp(-x^2 / 2) / sqrt(2 pi). x^2 is split as xh^2 + (x - xh)(x + xh) with xh
 * x rounded to 1/16, so xh^2 is exact and the rounding of a large x^2 does not cost
 * relative accuracy in the tails (as in W. J. Cody's erfc, ACM TOMS algorithm 715; from memory).
 */
export function normalPdf(x: number): number {
  if (!Number.isFinite(x)) return Number.isNaN(x) ? x : 0;
  const xh = Math.round(x * 16) / 16;
  return (Math.exp(-0.5 * xh * xh) * Math.exp(-0.5 * (x - xh) * (x + xh))) / SQRT_2PI;
}

/**
 * Phi(x) = P(Z <= x). For |x| < 1 the series Phi(x) = 1/2 + phi(x) sum_k x^(2k+1) / (2k+1)!!
 * (Abramowitz and Stegun 26.2.11); beyond, the lower tail from the Mills-ratio continued
 * fraction 1 - Phi(x) = phi(x) / (x + 1/(x + 2/(x + 3/(x + ...)))) (A&S 26.2.14), which
 * keeps full relative accuracy far into the tail where 1 - Phi rounds to 0 or 1.
 * (Equation numbers from memory; the tests hold both against mpmath.)
 */
export function normalCdf(x: number): number {
  if (Number.isNaN(x)) return Number.NaN;
  if (Math.abs(x) < SERIES_LIMIT) return 0.5 + normalPdf(x) * oddSeries(x);
  const tail = normalPdf(x) * millsRatio(Math.abs(x));
  return x < 0 ? tail : 1 - tail;
}

function oddSeries(x: number): number {
  const x2 = x * x;
  let term = x;
  let sum = x;
  for (let k = 1; k < 200; k++) {
    term *= x2 / (2 * k + 1);
    sum += term;
    if (Math.abs(term) <= 1e-17 * Math.abs(sum)) break;
  }
  return sum;
}

/** R(x) = (1 - Phi(x)) / phi(x) for x >= SERIES_LIMIT, the continued fraction evaluated backwards. */
function millsRatio(x: number): number {
  if (x === Infinity) return 0;
  // terms needed for 1e-16 fall with x: about 400 at x = 1, 100 at x = 2, 50 at x = 3
  // (measured against mpmath at 40 digits); the tests check the result across the range
  const depth = Math.ceil(40 + 400 / (x * x));
  let t = x;
  for (let k = depth; k >= 1; k--) t = x + k / t;
  return 1 / t;
}

// Acklam's rational approximation to the quantile (P. J. Acklam, "An algorithm for
// computing the inverse normal cumulative distribution function", 2003; relative error
// below 1.15e-9), refined by one Halley step below. Coefficients written from memory,
// then B[4] corrected against public copies of Acklam's list after the test of the
// unrefined error (which must stay below 1.15e-9) caught a slip in it.
const A = [-3.969683028665376e1, 2.209460984245205e2, -2.759285104469687e2, 1.38357751867269e2, -3.066479806614716e1, 2.506628277459239];
const B = [-5.447609879822406e1, 1.615858368580409e2, -1.556989798598866e2, 6.680131188771972e1, -1.328068155288572e1];
const C = [-7.784894002430293e-3, -3.223964580411365e-1, -2.400758277161838, -2.549732539343734, 4.374664141464968, 2.938163982698783];
const D = [7.784695709041462e-3, 3.224671290700398e-1, 2.445134137142996, 3.754408661907416];
const LOW_TAIL = 0.02425;

/** Acklam's approximation alone, for p <= 1/2 (exported for its accuracy test). */
export function acklamLowerQuantile(p: number): number {
  if (p < LOW_TAIL) {
    const q = Math.sqrt(-2 * Math.log(p));
    return (((((C[0] * q + C[1]) * q + C[2]) * q + C[3]) * q + C[4]) * q + C[5]) / ((((D[0] * q + D[1]) * q + D[2]) * q + D[3]) * q + 1);
  }
  const q = p - 0.5;
  const r = q * q;
  return (
    ((((((A[0] * r + A[1]) * r + A[2]) * r + A[3]) * r + A[4]) * r + A[5]) * q) /
    (((((B[0] * r + B[1]) * r + B[2]) * r + B[3]) * r + B[4]) * r + 1)
  );
}

/**
 * z with Phi(z) = p, for p in (0, 1). The upper half is taken as -z(1 - p) (1 - p is
 * exact there), so z(1 - p) = -z(p) holds exactly and the upper tail keeps its digits.
 * One Halley step x - u / (1 + x u / 2), u = (Phi(x) - p) / phi(x), on Acklam's start
 * brings the error to the accuracy of normalCdf (Halley converges cubically).
 */
export function normalQuantile(p: number): number {
  requireOpenUnit('normalQuantile', 'p', p);
  if (p > 0.5) return -lowerQuantile(1 - p);
  return lowerQuantile(p);
}

function lowerQuantile(p: number): number {
  const x = acklamLowerQuantile(p);
  const u = (normalCdf(x) - p) / normalPdf(x);
  return x - u / (1 + (x * u) / 2);
}
