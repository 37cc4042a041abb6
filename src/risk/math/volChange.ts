import { requireInteger, requireLength, requirePositive } from './checks.ts';
import { portfolioVolatility } from './contributions.ts';
import { matrixVector } from './covariance.ts';

/**
 * Why ex-ante volatility moved between two valuation dates: the weights (trades and
 * drift) or the market (the covariance). With s(w, S) = sqrt(A w'Sw), w0, S0 the
 * previous date's and w1, S1 today's (SPEC section 9):
 *   from_weights = 0.5 [(s(w1, S0) - s(w0, S0)) + (s(w1, S1) - s(w0, S1))],
 *   from_market  = (s(w1, S1) - s(w0, S0)) - from_weights
 *                = 0.5 [(s(w0, S1) - s(w0, S0)) + (s(w1, S1) - s(w1, S0))].
 * Averaging both orders of the two steps makes the split independent of the order: it
 * is the Shapley value of the two-factor game (L. S. Shapley, "A value for n-person
 * games", 1953).
 *
 * Per security, the weights part under one covariance S uses the exact identity
 * s(w1) - s(w0) = (s1^2 - s0^2) / (s1 + s0) = A dw' S (w0 + w1) / (s1 + s0), dw = w1 - w0
 * (S symmetric), so security i gets A dw_i (S (w0 + w1))_i / (s1 + s0): its trade times
 * its marginal risk at the midpoint of the two books. These add up exactly to
 * s(w1, S) - s(w0, S); averaged over S0 and S1 they add up to from_weights.
 */

export interface VolChange {
  /** s(w0, S0) and s(w1, S1), annualized. */
  volPrev: number;
  volNow: number;
  fromWeights: number;
  fromMarket: number;
  /** The weights part per security; adds up to fromWeights. */
  fromWeightsBySecurity: Float64Array;
}

/**
 * The split for n securities (row-major n x n S0 and S1 over the same securities in the
 * same order; a security held on one date only has weight 0 on the other, and a
 * covariance row for both). Both books zero-risk under an S: that S adds nothing.
 */
export function volatilityChange(
  s0: Float64Array,
  s1: Float64Array,
  n: number,
  w0: Float64Array,
  w1: Float64Array,
  periodsPerYear: number,
): VolChange {
  const fn = 'volatilityChange';
  requireInteger(fn, 'n', n, 1);
  requireLength(fn, 's0', s0.length, n * n);
  requireLength(fn, 's1', s1.length, n * n);
  requireLength(fn, 'w0', w0.length, n);
  requireLength(fn, 'w1', w1.length, n);
  const under0 = { sw0: matrixVector(s0, n, w0), sw1: matrixVector(s0, n, w1) };
  const under1 = { sw0: matrixVector(s1, n, w0), sw1: matrixVector(s1, n, w1) };
  return volatilityChangeFromProducts(under0, under1, w0, w1, periodsPerYear);
}

/** S w0 and S w1 under one covariance S (daily), over the same securities as the weights. */
export interface CovarianceProducts {
  sw0: Float64Array;
  sw1: Float64Array;
}

/**
 * The same split from the four products S0 w0, S0 w1, S1 w0, S1 w1 alone, for an
 * estimate that gives S w without forming S (the risk stage's rolling windows).
 */
export function volatilityChangeFromProducts(
  under0: CovarianceProducts,
  under1: CovarianceProducts,
  w0: Float64Array,
  w1: Float64Array,
  periodsPerYear: number,
): VolChange {
  const fn = 'volatilityChangeFromProducts';
  const n = w0.length;
  requireLength(fn, 'w1', w1.length, n);
  for (const [name, v] of [['S0 w0', under0.sw0], ['S0 w1', under0.sw1], ['S1 w0', under1.sw0], ['S1 w1', under1.sw1]] as const) {
    requireLength(fn, name, v.length, n);
  }
  requirePositive(fn, 'periodsPerYear', periodsPerYear);
  for (let i = 0; i < n; i++) {
    if (!Number.isFinite(w0[i]) || !Number.isFinite(w1[i])) throw new Error(`${fn}: weights of security ${i} must be finite, got ${w0[i]} and ${w1[i]}`);
  }
  const step0 = weightStep(under0, w0, w1, periodsPerYear);
  const step1 = weightStep(under1, w0, w1, periodsPerYear);
  const fromWeights = 0.5 * (step0.change + step1.change);
  const fromWeightsBySecurity = new Float64Array(n);
  for (let i = 0; i < n; i++) fromWeightsBySecurity[i] = 0.5 * (step0.bySecurity[i] + step1.bySecurity[i]);
  return {
    volPrev: step0.volBefore,
    volNow: step1.volAfter,
    fromWeights,
    fromMarket: step1.volAfter - step0.volBefore - fromWeights,
    fromWeightsBySecurity,
  };
}

interface WeightStep {
  volBefore: number;
  volAfter: number;
  change: number;
  bySecurity: Float64Array;
}

/** s(w1, S) - s(w0, S) and its exact split per security under one covariance, S (w0 + w1) = S w0 + S w1. */
function weightStep(products: CovarianceProducts, w0: Float64Array, w1: Float64Array, a: number): WeightStep {
  const { sw0, sw1 } = products;
  const n = w0.length;
  const volBefore = portfolioVolatility(sw0, w0, a);
  const volAfter = portfolioVolatility(sw1, w1, a);
  const bySecurity = new Float64Array(n);
  const denominator = volBefore + volAfter;
  if (denominator > 0) {
    for (let i = 0; i < n; i++) bySecurity[i] = (a * (w1[i] - w0[i]) * (sw0[i] + sw1[i])) / denominator;
  }
  return { volBefore, volAfter, change: volAfter - volBefore, bySecurity };
}
