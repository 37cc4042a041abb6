import { requireInteger, requireLength } from './checks.ts';

/**
 * Ledoit-Wolf shrinkage toward the constant-correlation target: O. Ledoit and M. Wolf,
 * "Honey, I shrunk the sample covariance matrix", Journal of Portfolio Management 30(4),
 * 2004. With T dates, N securities, y the column-demeaned returns and, as in the paper,
 * the divisor T:
 *   s_ij = (1/T) sum_t y_ti y_tj,  r_ij = s_ij / sqrt(s_ii s_jj),
 *   rbar = 2 / (N (N - 1)) sum_{i<j} r_ij,  f_ii = s_ii,  f_ij = rbar sqrt(s_ii s_jj),
 *   pi_ij = (1/T) sum_t (y_ti y_tj - s_ij)^2,                    pi-hat = sum_ij pi_ij,
 *   theta_ii,ij = (1/T) sum_t (y_ti^2 - s_ii)(y_ti y_tj - s_ij),
 *   rho-hat = sum_i pi_ii + sum_{i != j} (rbar / 2)(sqrt(s_jj/s_ii) theta_ii,ij + sqrt(s_ii/s_jj) theta_jj,ij),
 *   gamma-hat = sum_ij (f_ij - s_ij)^2,  kappa = (pi-hat - rho-hat) / gamma-hat,
 *   delta = max(0, min(1, kappa / T)),  shrunk = delta F + (1 - delta) S.
 *
 * The `sample` estimator divides by T - 1; so that intensity 0 gives exactly that matrix,
 * the shrunk matrix is returned times T / (T - 1) (both F and S scale with the divisor;
 * delta is computed with the paper's T and does not change).
 *
 * The point: with more securities than dates S is singular and its small eigenvalues
 * are noise; the target has one free correlation, so it is well conditioned, and the
 * mix is positive definite whenever delta > 0 and the target is.
 */

/** (relative rounding of f_ij, ~1e-14)^2: a gamma-hat below this share of ||S||^2 is zero. */
const ROUNDING_GAMMA = 1e-28;

export interface ShrunkCovariance {
  /** delta F + (1 - delta) S, row-major N x N, scaled to the divisor T - 1. */
  covariance: Float64Array;
  /** delta, the weight on the target, in [0, 1]. */
  intensity: number;
  /** rbar, the average sample correlation the target uses. */
  averageCorrelation: number;
  /** The estimates behind delta, for inspection and tests. */
  piHat: number;
  rhoHat: number;
  gammaHat: number;
}

/**
 * The shrunk covariance of the columns of `x` (row-major, rows = dates, x[t * cols + j]).
 * Needs at least 2 dates and 2 securities, finite returns and no constant column (its
 * correlation is undefined: leave riskless cash out before). When S already has constant
 * correlations (always so for 2 securities) the target equals S and the intensity is 0.
 */
export function ledoitWolfConstantCorrelation(x: Float64Array, rows: number, cols: number): ShrunkCovariance {
  const fn = 'ledoitWolfConstantCorrelation';
  requireInteger(fn, 'rows', rows, 2);
  requireInteger(fn, 'cols', cols, 2);
  requireLength(fn, 'x', x.length, rows * cols);
  const y = demeaned(fn, x, rows, cols);
  const n = cols;
  const s = new Float64Array(n * n);
  for (let t = 0; t < rows; t++) {
    const base = t * n;
    for (let i = 0; i < n; i++) {
      const yi = y[base + i];
      for (let j = i; j < n; j++) s[i * n + j] += yi * y[base + j];
    }
  }
  for (let i = 0; i < n; i++) {
    for (let j = i; j < n; j++) {
      s[i * n + j] /= rows;
      s[j * n + i] = s[i * n + j];
    }
  }
  const sd = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    if (!(s[i * n + i] > 0)) throw new Error(`${fn}: column ${i} has zero variance, so its correlation is undefined`);
    sd[i] = Math.sqrt(s[i * n + i]);
  }
  let correlationSum = 0;
  for (let i = 0; i < n; i++) for (let j = i + 1; j < n; j++) correlationSum += s[i * n + j] / (sd[i] * sd[j]);
  const rbar = (2 * correlationSum) / (n * (n - 1));

  const target = new Float64Array(n * n);
  let gammaHat = 0;
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) {
      target[i * n + j] = i === j ? s[i * n + i] : rbar * sd[i] * sd[j];
      gammaHat += (target[i * n + j] - s[i * n + j]) ** 2;
    }
  }
  const { piHat, piDiagonal, thetaTerm } = asymptoticTerms(y, rows, n, s, sd);
  const rhoHat = piDiagonal + rbar * thetaTerm;
  // gamma at rounding level: the target is S itself (always so for N = 2), kappa is 0/0 and
  // no intensity changes the matrix; report none
  let squares = 0;
  for (let k = 0; k < n * n; k++) squares += s[k] * s[k];
  const intensity = gammaHat > ROUNDING_GAMMA * squares ? Math.max(0, Math.min(1, (piHat - rhoHat) / gammaHat / rows)) : 0;

  const toSampleDivisor = rows / (rows - 1);
  const covariance = new Float64Array(n * n);
  for (let k = 0; k < n * n; k++) covariance[k] = (intensity * target[k] + (1 - intensity) * s[k]) * toSampleDivisor;
  return { covariance, intensity, averageCorrelation: rbar, piHat, rhoHat, gammaHat };
}

/** y = x minus its column means; throws for a non-finite entry. */
function demeaned(fn: string, x: Float64Array, rows: number, cols: number): Float64Array {
  const means = new Float64Array(cols);
  for (let t = 0; t < rows; t++) {
    for (let j = 0; j < cols; j++) {
      const v = x[t * cols + j];
      if (!Number.isFinite(v)) throw new Error(`${fn}: x[${t}, ${j}] must be finite, got ${v}`);
      means[j] += v;
    }
  }
  for (let j = 0; j < cols; j++) means[j] /= rows;
  const y = new Float64Array(rows * cols);
  for (let t = 0; t < rows; t++) for (let j = 0; j < cols; j++) y[t * cols + j] = x[t * cols + j] - means[j];
  return y;
}

/**
 * pi-hat, sum_i pi_ii, and sum_{i != j} sqrt(s_jj/s_ii) theta_ii,ij. The two halves of
 * rho-hat's off-diagonal sum are the same sum with i and j swapped, so rbar/2 x 2 = rbar
 * times one of them. One pass over the pairs i < j gives pi_ij (= pi_ji), theta_ii,ij and
 * theta_jj,ij from the same products, with the dates innermost (each security's series
 * contiguous), so the sums stay in registers.
 */
function asymptoticTerms(
  y: Float64Array,
  rows: number,
  n: number,
  s: Float64Array,
  sd: Float64Array,
): { piHat: number; piDiagonal: number; thetaTerm: number } {
  // series[i * rows + t] = y_ti, and squares[i * rows + t] = y_ti^2 - s_ii
  const series = new Float64Array(n * rows);
  const squares = new Float64Array(n * rows);
  for (let t = 0; t < rows; t++) {
    for (let i = 0; i < n; i++) {
      const v = y[t * n + i];
      series[i * rows + t] = v;
      squares[i * rows + t] = v * v - s[i * n + i];
    }
  }
  let piDiagonal = 0;
  let piOff = 0;
  let thetaTerm = 0;
  for (let i = 0; i < n; i++) {
    const bi = i * rows;
    let diagonal = 0;
    for (let t = 0; t < rows; t++) diagonal += squares[bi + t] * squares[bi + t];
    piDiagonal += diagonal;
    for (let j = i + 1; j < n; j++) {
      const bj = j * rows;
      const sij = s[i * n + j];
      let pi = 0;
      let thetaI = 0;
      let thetaJ = 0;
      for (let t = 0; t < rows; t++) {
        const product = series[bi + t] * series[bj + t] - sij;
        pi += product * product;
        thetaI += squares[bi + t] * product;
        thetaJ += squares[bj + t] * product;
      }
      piOff += 2 * pi;
      thetaTerm += (sd[j] / sd[i]) * thetaI + (sd[i] / sd[j]) * thetaJ;
    }
  }
  return { piHat: (piDiagonal + piOff) / rows, piDiagonal: piDiagonal / rows, thetaTerm: thetaTerm / rows };
}
