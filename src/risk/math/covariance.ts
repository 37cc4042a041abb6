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
  // the listed columns as series (column-major), centred in place
  const window = new Float64Array(k * rowCount);
  for (let t = 0; t < rowCount; t++) {
    const base = (rowStart + t) * stride;
    for (let a = 0; a < k; a++) window[a * rowCount + t] = x[base + cols[a]];
  }
  centreSeriesInto(window, rowCount, 0, rowCount, new Float64Array(k), window);
  const sw = centredTimesWeights(window, rowCount, Int32Array.from(cols.keys()), w, new Float64Array(k), new Float64Array(rowCount));
  let variance = 0;
  for (let a = 0; a < k; a++) variance += w[a] * sw[a];
  return { sw, variance };
}

/**
 * Centres a window of each of several series laid end to end (series j is
 * x[j * seriesLength .. (j + 1) * seriesLength - 1], e.g. one security's returns over all
 * dates): out[j * windowLength + t] = x[j * seriesLength + start + t] - m_j, with m_j the
 * mean of that window (left in `means`). The risk stage centres each date's window once
 * and serves every portfolio from it. `out` may be `x` itself when the windows are the
 * whole series. NaN propagates.
 */
export function centreSeriesInto(x: Float64Array, seriesLength: number, start: number, windowLength: number, means: Float64Array, out: Float64Array): void {
  const fn = 'centreSeriesInto';
  requireInteger(fn, 'windowLength', windowLength, 1);
  requireInteger(fn, 'start', start, 0);
  if (start + windowLength > seriesLength) throw new Error(`${fn}: window ${start}..${start + windowLength - 1} exceeds the series length ${seriesLength}`);
  const count = means.length;
  requireLength(fn, 'x', x.length, count * seriesLength);
  requireLength(fn, 'out', out.length, count * windowLength);
  for (let j = 0; j < count; j++) {
    const from = j * seriesLength + start;
    let sum = 0;
    for (let t = 0; t < windowLength; t++) sum += x[from + t];
    const m = sum / windowLength;
    means[j] = m;
    const to = j * windowLength;
    for (let t = 0; t < windowLength; t++) out[to + t] = x[from + t] - m;
  }
}

/**
 * S w = X_c'(X_c w) / (rows - 1) on centred series from `centreSeriesInto` (series j at
 * xc[j * rowCount ..]), for the series listed in `cols` (w[a] and the result's entry a
 * belong to series cols[a]). O(rows * cols.length), every read contiguous: first the
 * portfolio's centred value per row (into `portfolio`, length rowCount), then one dot
 * product per series, summed with four running sums to break the chain of dependent
 * additions. Writes into `out` and returns it.
 */
export function centredTimesWeights(
  xc: Float64Array,
  rowCount: number,
  cols: Int32Array,
  w: Float64Array,
  out: Float64Array,
  portfolio: Float64Array,
): Float64Array {
  const fn = 'centredTimesWeights';
  requireInteger(fn, 'rowCount', rowCount, 2);
  if (xc.length % rowCount !== 0) throw new Error(`${fn}: xc has length ${xc.length}, not a multiple of rowCount ${rowCount}`);
  requireIndices(fn, 'cols', cols, xc.length / rowCount);
  requireLength(fn, 'w', w.length, cols.length);
  requireLength(fn, 'out', out.length, cols.length);
  requireLength(fn, 'portfolio', portfolio.length, rowCount);
  const k = cols.length;
  portfolio.fill(0);
  for (let a = 0; a < k; a++) {
    const base = cols[a] * rowCount;
    const wa = w[a];
    for (let t = 0; t < rowCount; t++) portfolio[t] += xc[base + t] * wa;
  }
  for (let a = 0; a < k; a++) out[a] = dot(xc, cols[a] * rowCount, portfolio, 0, rowCount) / (rowCount - 1);
  return out;
}

/**
 * sum over t < length of x[xStart + t] * y[yStart + t], in four partial sums (a chain of
 * dependent additions is what bounds a plain loop), added as (s0 + s1) + (s2 + s3).
 */
function dot(x: Float64Array, xStart: number, y: Float64Array, yStart: number, length: number): number {
  let s0 = 0;
  let s1 = 0;
  let s2 = 0;
  let s3 = 0;
  let t = 0;
  for (; t + 3 < length; t += 4) {
    s0 += x[xStart + t] * y[yStart + t];
    s1 += x[xStart + t + 1] * y[yStart + t + 1];
    s2 += x[xStart + t + 2] * y[yStart + t + 2];
    s3 += x[xStart + t + 3] * y[yStart + t + 3];
  }
  for (; t < length; t++) s0 += x[xStart + t] * y[yStart + t];
  return s0 + s1 + (s2 + s3);
}

/**
 * S[cols, cols] = X_c' X_c / divisor on centred series from `centreSeriesInto` (series j at
 * xc[j * rowCount ..]), full and row-major (k x k for k listed series), each pair's sum
 * kept until `reset` (the next date's window): the portfolios of one date share most of
 * their securities and ask for several sets each (today's, yesterday's and tomorrow's
 * holdings, the benchmark's), so a pair is summed once per date however many sets hold
 * it, at most N^2 / 2 sums of `rowCount` products. The sums are made in the same order
 * whichever set asks first: the same digits. For a few dates' use; a walk over many reads
 * a sliding state instead. The N x N sums are allocated on first use.
 */
export class CentredCrossProducts {
  private sums: Float64Array | null = null;
  /** The generation in which each sum was made; sums of older generations are stale. */
  private made: Int32Array | null = null;
  private generation = 1;

  constructor(private readonly seriesCount: number) {}

  /** The centred series changed: every kept sum is stale. */
  reset(): void {
    this.generation++;
  }

  subMatrix(xc: Float64Array, rowCount: number, cols: Int32Array, divisor: number, out: Float64Array): Float64Array {
    const fn = 'CentredCrossProducts.subMatrix';
    const n = this.seriesCount;
    requireInteger(fn, 'rowCount', rowCount, 1);
    requireLength(fn, 'xc', xc.length, n * rowCount);
    requireIndices(fn, 'cols', cols, n);
    const k = cols.length;
    requireLength(fn, 'out', out.length, k * k);
    const sums = (this.sums ??= new Float64Array(n * n));
    const made = (this.made ??= new Int32Array(n * n));
    const generation = this.generation;
    for (let a = 0; a < k; a++) {
      for (let b = a; b < k; b++) {
        const i = Math.min(cols[a], cols[b]);
        const j = Math.max(cols[a], cols[b]);
        const at = i * n + j;
        if (made[at] !== generation) {
          sums[at] = dot(xc, i * rowCount, xc, j * rowCount, rowCount);
          made[at] = generation;
        }
        out[a * k + b] = sums[at] / divisor;
        out[b * k + a] = out[a * k + b];
      }
    }
    return out;
  }
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

/**
 * S[idx, idx] v, as `subMatrixVector`, reading only the upper triangle (i <= j) of an
 * n x n row-major symmetric S; the lower triangle is never read, so a caller may keep
 * only the upper one up to date. Each entry read serves two products (S_ab v_b for out[a]
 * and S_ab v_a for out[b]), and four running sums instead of one break the chain of
 * dependent additions: about 40% of the time of `subMatrixVector` on 200 of 1,000
 * securities. Rows are taken in ascending index order (holdings come sorted by security;
 * other orders are sorted first), so the sums run in another order than
 * `subMatrixVector`'s and the two agree to rounding only.
 * Writes into `out` (length idx.length) and returns it.
 */
export function upperSubMatrixVector(u: Float64Array, n: number, idx: Int32Array, v: Float64Array, out: Float64Array): Float64Array {
  const fn = 'upperSubMatrixVector';
  checkSquare(fn, u, n);
  requireIndices(fn, 'idx', idx, n);
  requireLength(fn, 'v', v.length, idx.length);
  requireLength(fn, 'out', out.length, idx.length);
  for (let a = 1; a < idx.length; a++) {
    if (idx[a] < idx[a - 1]) return unsortedUpperProduct(u, n, idx, v, out);
  }
  return ascendingUpperProduct(u, n, idx, v, out);
}

/** The product with idx sorted through a permutation, results put back in the caller's order. */
function unsortedUpperProduct(u: Float64Array, n: number, idx: Int32Array, v: Float64Array, out: Float64Array): Float64Array {
  const order = Array.from(idx.keys()).sort((a, b) => idx[a] - idx[b]);
  const sorted = ascendingUpperProduct(
    u,
    n,
    Int32Array.from(order, (a) => idx[a]),
    Float64Array.from(order, (a) => v[a]),
    new Float64Array(idx.length),
  );
  order.forEach((a, position) => (out[a] = sorted[position]));
  return out;
}

function ascendingUpperProduct(u: Float64Array, n: number, idx: Int32Array, v: Float64Array, out: Float64Array): Float64Array {
  const k = idx.length;
  out.fill(0);
  for (let a = 0; a < k; a++) {
    const base = idx[a] * n;
    const va = v[a];
    // out[a] already holds the terms b < a, added as rows b went by
    let s0 = out[a] + u[base + idx[a]] * va;
    let s1 = 0;
    let s2 = 0;
    let s3 = 0;
    let b = a + 1;
    for (; b + 3 < k; b += 4) {
      const x0 = u[base + idx[b]];
      const x1 = u[base + idx[b + 1]];
      const x2 = u[base + idx[b + 2]];
      const x3 = u[base + idx[b + 3]];
      s0 += x0 * v[b];
      s1 += x1 * v[b + 1];
      s2 += x2 * v[b + 2];
      s3 += x3 * v[b + 3];
      out[b] += x0 * va;
      out[b + 1] += x1 * va;
      out[b + 2] += x2 * va;
      out[b + 3] += x3 * va;
    }
    for (; b < k; b++) {
      const x = u[base + idx[b]];
      s0 += x * v[b];
      out[b] += x * va;
    }
    out[a] = s0 + s1 + (s2 + s3);
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
