import { CholeskyDecomposition, Matrix } from 'ml-matrix';
import { requireInteger, requireLength, requirePositive } from './checks.ts';

export interface EulerContributions {
  /** Annualized volatility sqrt(A w'Sw). */
  vol: number;
  /** Marginal contribution d vol / d w_i = A (Sw)_i / vol. */
  mcr: Float64Array;
  /** Component contribution w_i mcr_i; they add up to vol. */
  ccr: Float64Array;
  /** Share ccr_i / vol; adds up to 1. */
  pct: Float64Array;
}

/**
 * Euler allocation of portfolio volatility. vol(w) = sqrt(A w'Sw) is homogeneous of
 * degree 1 in w, so by Euler's theorem vol = sum_i w_i d vol/d w_i (see e.g.
 * Tasche, "Capital Allocation to Business Units and Sub-Portfolios: the Euler
 * Principle", 2008). Input is Sw (daily) and w, so the caller can get Sw from whichever
 * estimator it uses without forming S.
 *
 * A zero-risk portfolio (all cash, or weights all zero) has vol 0: mcr and ccr are 0
 * (nothing adds risk) and pct is NaN, since a share of zero risk is undefined.
 */
export function eulerContributions(sw: Float64Array, w: Float64Array, periodsPerYear: number): EulerContributions {
  const vol = portfolioVolatility(sw, w, periodsPerYear);
  const n = w.length;
  const mcr = new Float64Array(n);
  const ccr = new Float64Array(n);
  const pct = new Float64Array(n);
  if (vol === 0) {
    pct.fill(Number.NaN);
    return { vol, mcr, ccr, pct };
  }
  for (let i = 0; i < n; i++) {
    mcr[i] = (periodsPerYear * sw[i]) / vol;
    ccr[i] = w[i] * mcr[i];
    pct[i] = ccr[i] / vol;
  }
  return { vol, mcr, ccr, pct };
}

/**
 * sqrt(A w'Sw) from Sw (daily) and w: the `vol` of `eulerContributions`, for the rows
 * that need no contributions. Throws when w'Sw is negative beyond the rounding of its
 * own sum (the covariance is then not positive semi-definite).
 */
export function portfolioVolatility(sw: Float64Array, w: Float64Array, periodsPerYear: number): number {
  const fn = 'portfolioVolatility';
  requireLength(fn, 'sw', sw.length, w.length);
  requirePositive(fn, 'periodsPerYear', periodsPerYear);
  let variance = 0;
  let scale = 0;
  for (let i = 0; i < w.length; i++) {
    variance += w[i] * sw[i];
    scale += Math.abs(w[i] * sw[i]);
  }
  // a PSD matrix gives w'Sw >= 0; allow only the rounding of the sum itself below zero
  if (variance < -1e-12 * scale) throw new Error(`${fn}: w'Sw = ${variance} < 0, the covariance is not positive semi-definite`);
  return Math.sqrt(periodsPerYear * Math.max(0, variance));
}

/**
 * Diversification ratio sum_i |w_i| vol_i / vol_p (Choueifaty and Coignard, "Toward
 * Maximum Diversification", Journal of Portfolio Management 35(1), 2008, long-only).
 * Absolute weights carry the long-only meaning over to shorts: by the triangle
 * inequality vol_p = ||sum w_i sigma_i e_i|| <= sum |w_i| vol_i, so the ratio stays
 * >= 1 and still reads "how much of the stand-alone risk is diversified away".
 * Zero portfolio volatility gives NaN (undefined), not Infinity.
 */
export function diversificationRatio(w: Float64Array, vols: Float64Array, portfolioVol: number): number {
  const fn = 'diversificationRatio';
  requireLength(fn, 'vols', vols.length, w.length);
  if (!(portfolioVol >= 0)) throw new Error(`${fn}: portfolioVol must be >= 0, got ${portfolioVol}`);
  let standAlone = 0;
  for (let i = 0; i < w.length; i++) {
    if (!(vols[i] >= 0)) throw new Error(`${fn}: vols[${i}] must be >= 0, got ${vols[i]}`);
    standAlone += Math.abs(w[i]) * vols[i];
  }
  return portfolioVol === 0 ? Number.NaN : standAlone / portfolioVol;
}

const NEAR_SINGULAR = 1e-12;

/**
 * Fully invested minimum-variance weights w = S^-1 1 / (1' S^-1 1) (Markowitz; the
 * closed form of min w'Sw subject to 1'w = 1, shorts allowed). Solved by Cholesky,
 * which also tells a singular or indefinite S apart and throws for it.
 */
export function minimumVarianceWeights(s: Float64Array, n: number): Float64Array {
  const fn = 'minimumVarianceWeights';
  requireInteger(fn, 'n', n, 1);
  requireLength(fn, 's', s.length, n * n);
  // symmetrize: an estimate that is symmetric only to rounding would fail the exact check
  const m = new Matrix(n, n);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) m.set(i, j, (s[i * n + j] + s[j * n + i]) / 2);
  }
  const cholesky = new CholeskyDecomposition(m);
  if (!cholesky.isPositiveDefinite()) throw new Error(`${fn}: the covariance matrix is not positive definite`);
  // ml-matrix accepts any positive pivot; a pivot that kept under 1e-12 of its variance
  // means the security is (to rounding) a mix of the others and the weights are noise
  const l = cholesky.lowerTriangularMatrix;
  for (let j = 0; j < n; j++) {
    if (l.get(j, j) ** 2 <= NEAR_SINGULAR * m.get(j, j)) {
      throw new Error(`${fn}: the covariance matrix is not positive definite (column ${j} is a combination of the others)`);
    }
  }
  const solution = cholesky.solve(Matrix.ones(n, 1));
  let total = 0;
  for (let i = 0; i < n; i++) total += solution.get(i, 0);
  const w = new Float64Array(n);
  for (let i = 0; i < n; i++) w[i] = solution.get(i, 0) / total;
  return w;
}
