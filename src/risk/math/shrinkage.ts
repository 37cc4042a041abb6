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
 * The fourth-moment terms need no pair loop over the dates (O(T N^2)): since
 * s_ij = (1/T) sum_t y_ti y_tj exactly,
 *   pi-hat = (1/T) sum_t (sum_i y_ti^2)^2 - sum_ij s_ij^2,
 *   sum_{j != i} sqrt(s_jj/s_ii) theta_ii,ij
 *     = (1/(T sd_i)) sum_t (y_ti^2 - s_ii) y_ti (U_t - sd_i y_ti) - (c_i / sd_i) sum_{j != i} sd_j s_ij,
 *   with sd_i = sqrt(s_ii), U_t = sum_j sd_j y_tj and c_i = (1/T) sum_t (y_ti^2 - s_ii)
 *   (0 but for rounding; kept so the identity holds for the s given),
 * so given S the intensity costs O(N^2 + T N): what lets the risk stage shrink every
 * portfolio on every date with S read from a sliding window (`ledoitWolfIntensity`).
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
  const series = centredSeries(fn, x, rows, cols);
  const n = cols;
  const s = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    for (let j = i; j < n; j++) {
      let sum = 0;
      for (let t = 0; t < rows; t++) sum += series[i * rows + t] * series[j * rows + t];
      s[i * n + j] = sum / rows;
      s[j * n + i] = s[i * n + j];
    }
  }
  const shrinkage = ledoitWolfIntensity(s, series, rows, n, fn);
  const { intensity, averageCorrelation: rbar } = shrinkage;
  const toSampleDivisor = rows / (rows - 1);
  const covariance = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) {
      const target = i === j ? s[i * n + i] : rbar * Math.sqrt(s[i * n + i] * s[j * n + j]);
      covariance[i * n + j] = (intensity * target + (1 - intensity) * s[i * n + j]) * toSampleDivisor;
    }
  }
  return { covariance, ...shrinkage };
}

export type LedoitWolfIntensity = Omit<ShrunkCovariance, 'covariance'>;

/**
 * delta, rbar and the estimates behind them from S (N x N, full, divisor T as in the
 * paper) and the centred window it came from, `series[i * rows + t]` = y_ti, in
 * O(N^2 + T N) (the identities above). S must have a positive diagonal: leave constant
 * columns out before.
 */
export function ledoitWolfIntensity(s: Float64Array, series: Float64Array, rows: number, n: number, fn = 'ledoitWolfIntensity'): LedoitWolfIntensity {
  requireLength(fn, 's', s.length, n * n);
  requireLength(fn, 'series', series.length, n * rows);
  const sd = new Float64Array(n);
  const inverseSd = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    if (!(s[i * n + i] > 0)) throw new Error(`${fn}: column ${i} has zero variance, so its correlation is undefined`);
    sd[i] = Math.sqrt(s[i * n + i]);
    inverseSd[i] = 1 / sd[i];
  }
  // one pass over the upper triangle for the correlations, sum_ij s_ij^2 and sum_{j != i} sd_j s_ij
  let correlationSum = 0;
  let squares = 0;
  const sdWeightedRow = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const row = i * n;
    const sdi = sd[i];
    squares += s[row + i] * s[row + i];
    let correlations = 0;
    let offSquares = 0;
    let weighted = 0;
    for (let j = i + 1; j < n; j++) {
      const sij = s[row + j];
      correlations += sij * inverseSd[j];
      offSquares += sij * sij;
      weighted += sd[j] * sij;
      sdWeightedRow[j] += sdi * sij;
    }
    correlationSum += correlations * inverseSd[i];
    squares += 2 * offSquares;
    sdWeightedRow[i] += weighted;
  }
  const rbar = (2 * correlationSum) / (n * (n - 1));
  // off the diagonal only: there the target is S's own variance
  let gammaHat = 0;
  for (let i = 0; i < n; i++) {
    const row = i * n;
    const scaled = rbar * sd[i];
    let sum = 0;
    for (let j = i + 1; j < n; j++) {
      const gap = scaled * sd[j] - s[row + j];
      sum += gap * gap;
    }
    gammaHat += 2 * sum;
  }
  const { piHat: fourthMoments, piDiagonal, thetaTerm: thetaSums, centredSquares } = fourthMomentSums(s, series, rows, n, sd);
  let sdWeightedOff = 0;
  for (let i = 0; i < n; i++) sdWeightedOff += centredSquares[i] * inverseSd[i] * sdWeightedRow[i];
  const piHat = fourthMoments - squares;
  const thetaTerm = thetaSums - sdWeightedOff;
  const rhoHat = piDiagonal + rbar * thetaTerm;
  // gamma at rounding level: the target is S itself (always so for N = 2), kappa is 0/0 and
  // no intensity changes the matrix; report none
  const intensity = gammaHat > ROUNDING_GAMMA * squares ? Math.max(0, Math.min(1, (piHat - rhoHat) / gammaHat / rows)) : 0;
  return { intensity, averageCorrelation: rbar, piHat, rhoHat, gammaHat };
}

/**
 * (delta F + (1 - delta) S) w times T / (T - 1), the shrunk matrix in the sample
 * estimator's divisor, from S (divisor T) without forming F: (F w)_i = s_ii w_i +
 * rbar sd_i (sum_j sd_j w_j - sd_i w_i). O(N^2); writes into `out` and returns it.
 */
export function shrunkTimes(s: Float64Array, n: number, rows: number, shrinkage: Pick<LedoitWolfIntensity, 'intensity' | 'averageCorrelation'>, w: Float64Array, out: Float64Array): Float64Array {
  const fn = 'shrunkTimes';
  requireLength(fn, 's', s.length, n * n);
  requireLength(fn, 'w', w.length, n);
  requireLength(fn, 'out', out.length, n);
  const { intensity, averageCorrelation: rbar } = shrinkage;
  let sdTimesW = 0;
  for (let i = 0; i < n; i++) sdTimesW += Math.sqrt(s[i * n + i]) * w[i];
  const toSampleDivisor = rows / (rows - 1);
  for (let i = 0; i < n; i++) {
    const base = i * n;
    let sw = 0;
    for (let j = 0; j < n; j++) sw += s[base + j] * w[j];
    const sii = s[base + i];
    const sdi = Math.sqrt(sii);
    const fw = sii * w[i] + rbar * sdi * (sdTimesW - sdi * w[i]);
    out[i] = (intensity * fw + (1 - intensity) * sw) * toSampleDivisor;
  }
  return out;
}

/** series[j * rows + t] = x_tj minus its column mean; throws for a non-finite entry. */
function centredSeries(fn: string, x: Float64Array, rows: number, cols: number): Float64Array {
  const series = new Float64Array(rows * cols);
  for (let j = 0; j < cols; j++) {
    let sum = 0;
    for (let t = 0; t < rows; t++) {
      const v = x[t * cols + j];
      if (!Number.isFinite(v)) throw new Error(`${fn}: x[${t}, ${j}] must be finite, got ${v}`);
      sum += v;
    }
    const mean = sum / rows;
    for (let t = 0; t < rows; t++) series[j * rows + t] = x[t * cols + j] - mean;
  }
  return series;
}

/**
 * The date sums of the identities above, each security's series read contiguously:
 * (1/T) sum_t (sum_i y_ti^2)^2, sum_i pi_ii, (1/T) sum_i (1/sd_i) sum_t (y_ti^2 - s_ii)
 * y_ti (U_t - sd_i y_ti), and c_i per security.
 */
function fourthMomentSums(
  s: Float64Array,
  series: Float64Array,
  rows: number,
  n: number,
  sd: Float64Array,
): { piHat: number; piDiagonal: number; thetaTerm: number; centredSquares: Float64Array } {
  const squareSums = new Float64Array(rows);
  const u = new Float64Array(rows);
  for (let i = 0; i < n; i++) {
    const base = i * rows;
    for (let t = 0; t < rows; t++) {
      const v = series[base + t];
      squareSums[t] += v * v;
      u[t] += sd[i] * v;
    }
  }
  let fourth = 0;
  for (let t = 0; t < rows; t++) fourth += squareSums[t] * squareSums[t];
  let piDiagonal = 0;
  let thetaTerm = 0;
  const centredSquares = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const base = i * rows;
    const sii = s[i * n + i];
    let diagonal = 0;
    let theta = 0;
    let c = 0;
    for (let t = 0; t < rows; t++) {
      const v = series[base + t];
      const a = v * v - sii;
      diagonal += a * a;
      theta += a * v * (u[t] - sd[i] * v);
      c += a;
    }
    piDiagonal += diagonal;
    thetaTerm += theta / sd[i];
    centredSquares[i] = c / rows;
  }
  return { piHat: fourth / rows, piDiagonal: piDiagonal / rows, thetaTerm: thetaTerm / rows, centredSquares };
}
