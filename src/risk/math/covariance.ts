import { requireIndices, requireInteger, requireLength } from './checks.ts';

/**
 * Sample covariance of the columns of a row-major matrix (rows = dates,
 * cols = securities, `x[t * cols + j]`) and products with it.
 *
 * S_ij = sum_t (x_ti - m_i)(x_tj - m_j) / (rows - 1), m the column means: the unbiased
 * sample covariance, computed in two passes (means, then centred products) so that
 * returns around a large common level keep their digits. NaN propagates.
 */
export function sampleCovariance(x: Float64Array, rows: number, cols: number): Float64Array {
  checkMatrix('sampleCovariance', x, rows, cols);
  const means = columnMeans(x, rows, cols);
  const s = new Float64Array(cols * cols);
  const centred = new Float64Array(cols);
  for (let t = 0; t < rows; t++) {
    const base = t * cols;
    for (let j = 0; j < cols; j++) centred[j] = x[base + j] - means[j];
    for (let i = 0; i < cols; i++) {
      const di = centred[i];
      const rowI = i * cols;
      for (let j = i; j < cols; j++) s[rowI + j] += di * centred[j];
    }
  }
  const divisor = rows - 1;
  for (let i = 0; i < cols; i++) {
    for (let j = i; j < cols; j++) {
      const v = s[i * cols + j] / divisor;
      s[i * cols + j] = v;
      s[j * cols + i] = v;
    }
  }
  return s;
}

export interface CovarianceProduct {
  /** S w, one entry per column. */
  sw: Float64Array;
  /** w' S w. */
  variance: number;
}

/**
 * S w without forming S: with X the column-centred matrix, S w = X'(X w) / (rows - 1),
 * which costs O(rows * cols) instead of O(rows * cols^2). X w is the centred series of
 * the constant-weight portfolio, so `variance` equals its sample variance.
 */
export function covarianceTimesWeights(x: Float64Array, rows: number, cols: number, w: Float64Array): CovarianceProduct {
  checkMatrix('covarianceTimesWeights', x, rows, cols);
  const all = new Int32Array(cols);
  for (let j = 0; j < cols; j++) all[j] = j;
  return covarianceTimesWeightsAt(x, 0, rows, cols, all, w);
}

/**
 * As `covarianceTimesWeights`, on a window of a wider matrix: `x` has `stride` columns,
 * the window is rows rowStart .. rowStart + rowCount - 1, and only the columns listed
 * in `cols` take part (w[a] is the weight of column cols[a]; sw[a] likewise). This lets
 * the caller keep one dates x all-securities return matrix and slide over it.
 */
export function covarianceTimesWeightsAt(
  x: Float64Array,
  rowStart: number,
  rowCount: number,
  stride: number,
  cols: Int32Array,
  w: Float64Array,
): CovarianceProduct {
  const fn = 'covarianceTimesWeightsAt';
  requireInteger(fn, 'rowCount', rowCount, 2);
  requireInteger(fn, 'rowStart', rowStart, 0);
  requireInteger(fn, 'stride', stride, 1);
  if ((rowStart + rowCount) * stride > x.length) {
    throw new Error(`${fn}: rows ${rowStart}..${rowStart + rowCount - 1} with stride ${stride} exceed x (length ${x.length})`);
  }
  requireIndices(fn, 'cols', cols, stride);
  requireLength(fn, 'w', w.length, cols.length);

  const k = cols.length;
  const means = new Float64Array(k);
  for (let t = rowStart; t < rowStart + rowCount; t++) {
    const base = t * stride;
    for (let a = 0; a < k; a++) means[a] += x[base + cols[a]];
  }
  for (let a = 0; a < k; a++) means[a] /= rowCount;

  const sw = new Float64Array(k);
  for (let t = rowStart; t < rowStart + rowCount; t++) {
    const base = t * stride;
    let portfolio = 0;
    for (let a = 0; a < k; a++) portfolio += (x[base + cols[a]] - means[a]) * w[a];
    for (let a = 0; a < k; a++) sw[a] += (x[base + cols[a]] - means[a]) * portfolio;
  }
  let variance = 0;
  for (let a = 0; a < k; a++) {
    sw[a] /= rowCount - 1;
    variance += w[a] * sw[a];
  }
  return { sw, variance };
}

/** w' S w for an n x n row-major S. */
export function quadraticForm(s: Float64Array, n: number, w: Float64Array): number {
  checkSquare('quadraticForm', s, n);
  requireLength('quadraticForm', 'w', w.length, n);
  let total = 0;
  for (let i = 0; i < n; i++) {
    let row = 0;
    const base = i * n;
    for (let j = 0; j < n; j++) row += s[base + j] * w[j];
    total += w[i] * row;
  }
  return total;
}

/** S v for an n x n row-major S. */
export function matrixVector(s: Float64Array, n: number, v: Float64Array): Float64Array {
  checkSquare('matrixVector', s, n);
  requireLength('matrixVector', 'v', v.length, n);
  const out = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    let row = 0;
    const base = i * n;
    for (let j = 0; j < n; j++) row += s[base + j] * v[j];
    out[i] = row;
  }
  return out;
}

/**
 * S[idx, idx] v: the product with the sub-matrix of the rows and columns listed in
 * `idx`, read in place from the full n x n S (out[a] = sum_b S[idx[a], idx[b]] v[b]).
 */
export function subMatrixVector(s: Float64Array, n: number, idx: Int32Array, v: Float64Array): Float64Array {
  checkSquare('subMatrixVector', s, n);
  requireIndices('subMatrixVector', 'idx', idx, n);
  requireLength('subMatrixVector', 'v', v.length, idx.length);
  const k = idx.length;
  const out = new Float64Array(k);
  for (let a = 0; a < k; a++) {
    const base = idx[a] * n;
    let row = 0;
    for (let b = 0; b < k; b++) row += s[base + idx[b]] * v[b];
    out[a] = row;
  }
  return out;
}

function checkMatrix(fn: string, x: Float64Array, rows: number, cols: number): void {
  requireInteger(fn, 'rows', rows, 2);
  requireInteger(fn, 'cols', cols, 1);
  requireLength(fn, 'x', x.length, rows * cols);
}

function checkSquare(fn: string, s: Float64Array, n: number): void {
  requireInteger(fn, 'n', n, 1);
  requireLength(fn, 's', s.length, n * n);
}

function columnMeans(x: Float64Array, rows: number, cols: number): Float64Array {
  const means = new Float64Array(cols);
  for (let t = 0; t < rows; t++) {
    const base = t * cols;
    for (let j = 0; j < cols; j++) means[j] += x[base + j];
  }
  for (let j = 0; j < cols; j++) means[j] /= rows;
  return means;
}
