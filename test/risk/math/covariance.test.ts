import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import * as ss from 'simple-statistics';
import { afterEach, describe, expect, it } from 'vitest';
import {
  CentredCrossProducts,
  covarianceTimesWeights,
  centredTimesWeights,
  centreSeriesInto,
  covarianceTimesWeightsAt,
  matrixVector,
  quadraticForm,
  sampleCovariance,
  subMatrixVector,
  upperSubMatrixVector,
} from '../../../src/risk/math/covariance.ts';
import { openDatabase } from '../../../src/storage/database.ts';
import { column, createRandom, maxRelativeError, pickColumns, randomReturns, randomWeights } from './fixtures.ts';

const rows = 63;
const cols = 6;

function portfolioSeries(x: Float64Array, w: Float64Array): number[] {
  const series: number[] = [];
  for (let t = 0; t < rows; t++) {
    let r = 0;
    for (let j = 0; j < cols; j++) r += x[t * cols + j] * w[j];
    series.push(r);
  }
  return series;
}

describe('sampleCovariance', () => {
  const random = createRandom(21);
  const x = randomReturns(random, rows, cols, { scale: 0.01 });

  it('matches simple-statistics sampleCovariance for every pair of columns', () => {
    const s = sampleCovariance(x, rows, cols);
    for (let i = 0; i < cols; i++) {
      for (let j = 0; j < cols; j++) {
        const reference = ss.sampleCovariance(column(x, rows, cols, i), column(x, rows, cols, j));
        expect(Math.abs(s[i * cols + j] - reference)).toBeLessThan(1e-12 * Math.abs(s[i * cols + i]));
      }
    }
  });

  describe('against DuckDB covar_samp', () => {
    let folder: string | null = null;
    afterEach(() => {
      if (folder) rmSync(folder, { recursive: true, force: true });
      folder = null;
    });

    it("equals DuckDB's own covar_samp aggregate over the same long-format returns", async () => {
      folder = mkdtempSync(join(tmpdir(), 'riskfold-cov-'));
      const db = await openDatabase(join(folder, 'reference.duckdb'));
      try {
        await db.run('create table r (t integer, j integer, v double)');
        const appender = await db.conn.createAppender('r');
        for (let t = 0; t < rows; t++) {
          for (let j = 0; j < cols; j++) {
            appender.appendInteger(t);
            appender.appendInteger(j);
            appender.appendDouble(x[t * cols + j]);
            appender.endRow();
          }
        }
        appender.flushSync();
        appender.closeSync();
        const pairs = await db.all<{ i: number; j: number; c: number }>(
          'select a.j as i, b.j as j, covar_samp(a.v, b.v) as c from r a join r b using (t) group by a.j, b.j',
        );
        expect(pairs).toHaveLength(cols * cols);
        const s = sampleCovariance(x, rows, cols);
        for (const p of pairs) expect(Math.abs(s[p.i * cols + p.j] - p.c)).toBeLessThan(1e-12 * s[p.i * cols + p.i]);
      } finally {
        db.close();
      }
    });
  });

  it('is symmetric and positive semi-definite (ml-matrix EigenvalueDecomposition: min eigenvalue >= -1e-12 max)', () => {
    // fewer dates than securities: S is singular, the hardest case for PSD by rounding
    const wide = randomReturns(random, 5, 12, { scale: 0.01 });
    const s = sampleCovariance(wide, 5, 12);
    const m = new Matrix(12, 12);
    for (let i = 0; i < 12; i++) for (let j = 0; j < 12; j++) {
      expect(s[i * 12 + j]).toBe(s[j * 12 + i]);
      m.set(i, j, s[i * 12 + j]);
    }
    const eigenvalues = new EigenvalueDecomposition(m, { assumeSymmetric: true }).realEigenvalues;
    const largest = Math.max(...eigenvalues);
    expect(largest).toBeGreaterThan(0);
    expect(Math.min(...eigenvalues)).toBeGreaterThanOrEqual(-1e-12 * largest);
  });

  it('is unchanged when every price is scaled by a constant (log returns do not move; common practice, no source)', () => {
    const prices = new Float64Array((rows + 1) * cols);
    for (let j = 0; j < cols; j++) prices[j] = 40 + 7 * j;
    for (let t = 1; t <= rows; t++) {
      for (let j = 0; j < cols; j++) prices[t * cols + j] = prices[(t - 1) * cols + j] * Math.exp(x[(t - 1) * cols + j]);
    }
    const logReturns = (scale: number): Float64Array => {
      const r = new Float64Array(rows * cols);
      for (let t = 1; t <= rows; t++) {
        for (let j = 0; j < cols; j++) r[(t - 1) * cols + j] = Math.log((scale * prices[t * cols + j]) / (scale * prices[(t - 1) * cols + j]));
      }
      return r;
    };
    const base = sampleCovariance(logReturns(1), rows, cols);
    const scaled = sampleCovariance(logReturns(1234.5), rows, cols);
    expect(maxRelativeError(scaled, base, 1e-6)).toBeLessThan(1e-9);
  });

  it('gives a zero row and column (to rounding of the mean, 1e-30 against variances of 1e-4) for a security whose return never changes', () => {
    const flat = Float64Array.from(x);
    for (let t = 0; t < rows; t++) flat[t * cols + 2] = 0.0004;
    const s = sampleCovariance(flat, rows, cols);
    for (let j = 0; j < cols; j++) {
      expect(Math.abs(s[2 * cols + j])).toBeLessThan(1e-30);
      expect(s[j * cols + 2]).toBe(s[2 * cols + j]);
    }
  });

  it('throws for one row and for a matrix of the wrong length', () => {
    expect(() => sampleCovariance(new Float64Array(cols), 1, cols)).toThrow(/sampleCovariance: rows must be an integer >= 2, got 1/);
    expect(() => sampleCovariance(new Float64Array(10), 3, 4)).toThrow(/sampleCovariance: x has length 10, expected 12/);
  });
});

describe('covarianceTimesWeights', () => {
  const random = createRandom(22);
  const x = randomReturns(random, rows, cols, { scale: 0.01, offset: 0.5 });
  const w = randomWeights(random, cols);

  it('equals sampleCovariance followed by matrixVector, and w\'Sw equals quadraticForm', () => {
    const s = sampleCovariance(x, rows, cols);
    const { sw, variance } = covarianceTimesWeights(x, rows, cols, w);
    expect(maxRelativeError(sw, matrixVector(s, cols, w), 1e-6)).toBeLessThan(1e-11);
    expect(variance / quadraticForm(s, cols, w)).toBeCloseTo(1, 11);
  });

  it("gives the sample variance of the constant-weight series Xw as w'Sw (simple-statistics sampleVariance)", () => {
    const { variance } = covarianceTimesWeights(x, rows, cols, w);
    expect(variance / ss.sampleVariance(portfolioSeries(x, w))).toBeCloseTo(1, 10);
  });

  it('gives zero for all-zero weights', () => {
    const { sw, variance } = covarianceTimesWeights(x, rows, cols, new Float64Array(cols));
    expect(variance).toBe(0);
    expect(Array.from(sw)).toEqual(new Array(cols).fill(0));
  });

  it('throws when the weights do not match the columns', () => {
    expect(() => covarianceTimesWeights(x, rows, cols, new Float64Array(cols - 1))).toThrow(/w has length 5, expected 6/);
  });

  it('does not mutate its inputs', () => {
    const xCopy = Float64Array.from(x);
    const wCopy = Float64Array.from(w);
    covarianceTimesWeights(x, rows, cols, w);
    expect(x).toEqual(xCopy);
    expect(w).toEqual(wCopy);
  });
});

describe('covarianceTimesWeightsAt', () => {
  const random = createRandom(23);
  const allRows = 300;
  const stride = 20;
  const wide = randomReturns(random, allRows, stride, { scale: 0.012 });
  const picked = Int32Array.from([17, 3, 8, 11]);
  const w = Float64Array.from([0.4, 0.3, -0.1, 0.4]);

  it('equals covarianceTimesWeights on the window and columns copied out of the wider matrix', () => {
    const at = covarianceTimesWeightsAt(wide, 120, 63, stride, picked, w);
    const copy = covarianceTimesWeights(pickColumns(wide, 120, 63, stride, picked), 63, picked.length, w);
    expect(maxRelativeError(at.sw, copy.sw, 1e-8)).toBeLessThan(1e-13);
    expect(at.variance).toBeCloseTo(copy.variance, 17);
  });

  it('reaches the last rows of the matrix and refuses to read past them', () => {
    expect(() => covarianceTimesWeightsAt(wide, allRows - 63, 63, stride, picked, w)).not.toThrow();
    expect(() => covarianceTimesWeightsAt(wide, allRows - 62, 63, stride, picked, w)).toThrow(/exceed x/);
  });

  it('throws for a column index outside the stride and for a window of one row', () => {
    expect(() => covarianceTimesWeightsAt(wide, 0, 63, stride, Int32Array.from([0, 20]), Float64Array.from([0.5, 0.5]))).toThrow(
      /cols\[1\] = 20 is outside 0..19/,
    );
    expect(() => covarianceTimesWeightsAt(wide, 0, 1, stride, picked, w)).toThrow(/rowCount must be an integer >= 2/);
  });
});

describe('quadraticForm, matrixVector, subMatrixVector', () => {
  const random = createRandom(24);
  const n = 9;
  const s = sampleCovariance(randomReturns(random, 40, n, { scale: 0.01 }), 40, n);
  const v = randomWeights(random, n);

  it('match ml-matrix products', () => {
    const m = new Matrix(n, n);
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) m.set(i, j, s[i * n + j]);
    const reference = m.mmul(Matrix.columnVector(Array.from(v)));
    expect(maxRelativeError(matrixVector(s, n, v), reference.getColumn(0), 1e-8)).toBeLessThan(1e-13);
    const form = Matrix.rowVector(Array.from(v)).mmul(reference).get(0, 0);
    expect(quadraticForm(s, n, v) / form).toBeCloseTo(1, 13);
  });

  it('subMatrixVector equals the product with the sub-matrix copied out', () => {
    const idx = Int32Array.from([6, 1, 4]);
    const sub = new Float64Array(9);
    for (let a = 0; a < 3; a++) for (let b = 0; b < 3; b++) sub[a * 3 + b] = s[idx[a] * n + idx[b]];
    const u = Float64Array.from([0.2, -0.5, 1.3]);
    expect(maxRelativeError(subMatrixVector(s, n, idx, u), matrixVector(sub, 3, u), 1e-8)).toBeLessThan(1e-14);
  });

  it('throw for mismatched sizes and indices out of range', () => {
    expect(() => matrixVector(s, n, new Float64Array(n + 1))).toThrow(/matrixVector: v has length 10, expected 9/);
    expect(() => quadraticForm(s, n + 1, v)).toThrow(/quadraticForm: s has length 81, expected 100/);
    expect(() => subMatrixVector(s, n, Int32Array.from([9]), Float64Array.from([1]))).toThrow(/idx\[0\] = 9 is outside 0..8/);
    expect(() => subMatrixVector(s, n, Int32Array.from([1, 2]), Float64Array.from([1]))).toThrow(/v has length 1, expected 2/);
  });

  it('do not mutate their inputs', () => {
    const sCopy = Float64Array.from(s);
    const vCopy = Float64Array.from(v);
    matrixVector(s, n, v);
    quadraticForm(s, n, v);
    subMatrixVector(s, n, Int32Array.from([0, 2]), v.subarray(0, 2));
    expect(s).toEqual(sCopy);
    expect(v).toEqual(vCopy);
  });
});

describe('upperSubMatrixVector', () => {
  const random = createRandom(25);
  const n = 40;
  const s = sampleCovariance(randomReturns(random, 120, n, { scale: 0.01 }), 120, n);
  // the lower triangle poisoned: a read of it would turn the result into NaN
  const upper = Float64Array.from(s, (x, e) => (Math.floor(e / n) > e % n ? Number.NaN : x));

  it('equals the ml-matrix product with the sub-matrix copied out, for every size 1..17 (the 4-wide loop and its tails)', () => {
    for (let k = 1; k <= 17; k++) {
      const idx = Int32Array.from(Array.from({ length: n }, (_, j) => j).filter((j) => (j * 7 + k) % 3 !== 0).slice(0, k));
      const v = randomWeights(random, k);
      const sub = new Matrix(k, k);
      for (let a = 0; a < k; a++) for (let b = 0; b < k; b++) sub.set(a, b, s[idx[a] * n + idx[b]]);
      const reference = sub.mmul(Matrix.columnVector(Array.from(v))).getColumn(0);
      const out = upperSubMatrixVector(upper, n, idx, v, new Float64Array(k).fill(99));
      expect(maxRelativeError(out, reference, 1e-8)).toBeLessThan(1e-13);
      expect(maxRelativeError(out, subMatrixVector(s, n, idx, v), 1e-8)).toBeLessThan(1e-13);
    }
  });

  it('takes indices in any order (and repeated), giving each product in the order asked', () => {
    const idx = Int32Array.from([9, 2, 30, 2, 17]);
    const v = randomWeights(random, 5);
    const out = upperSubMatrixVector(upper, n, idx, v, new Float64Array(5));
    expect(maxRelativeError(out, subMatrixVector(s, n, idx, v), 1e-8)).toBeLessThan(1e-13);
  });

  it('throws for indices out of range and mismatched sizes', () => {
    const one = Float64Array.from([1, 2]);
    expect(() => upperSubMatrixVector(upper, n, Int32Array.from([3, 40]), one, new Float64Array(2))).toThrow(/idx\[1\] = 40 is outside 0..39/);
    expect(() => upperSubMatrixVector(upper, n, Int32Array.from([3, 4]), one, new Float64Array(3))).toThrow(/out has length 3, expected 2/);
    expect(() => upperSubMatrixVector(upper, n, Int32Array.from([3]), one, new Float64Array(1))).toThrow(/v has length 2, expected 1/);
  });

  it('does not mutate its inputs', () => {
    const before = Float64Array.from(upper);
    const v = Float64Array.from([0.4, -0.2, 0.7]);
    upperSubMatrixVector(upper, n, Int32Array.from([1, 5, 9]), v, new Float64Array(3));
    expect(upper).toEqual(before);
    expect(Array.from(v)).toEqual([0.4, -0.2, 0.7]);
  });
});

describe('centreSeriesInto and centredTimesWeights', () => {
  const random = createRandom(26);
  const count = 11;
  const length = 90;
  // series end to end (security-major), as the risk stage keeps returns by security
  const bySeries = randomReturns(random, count, length, { scale: 0.01, offset: 0.5 });
  const start = 17;
  const window = 63;
  const series = (j: number) => Array.from(bySeries.subarray(j * length + start, j * length + start + window));

  it('centres each series on its window mean (simple-statistics mean)', () => {
    const means = new Float64Array(count);
    const xc = new Float64Array(count * window);
    centreSeriesInto(bySeries, length, start, window, means, xc);
    for (let j = 0; j < count; j++) {
      expect(means[j]).toBeCloseTo(ss.mean(series(j)), 15);
      // 63 values near 0.5: the rounding of the mean is left over
      expect(Math.abs(ss.sum(Array.from(xc.subarray(j * window, (j + 1) * window))))).toBeLessThan(1e-13);
    }
  });

  it('gives S w for any series equal to simple-statistics sample covariances times the weights, offset 0.5 included', () => {
    const means = new Float64Array(count);
    const xc = new Float64Array(count * window);
    centreSeriesInto(bySeries, length, start, window, means, xc);
    for (const cols of [[3], [0, 4, 5], [1, 2, 3, 6, 7, 9, 10]]) {
      const idx = Int32Array.from(cols);
      const w = randomWeights(random, cols.length);
      const sw = centredTimesWeights(xc, window, idx, w, new Float64Array(cols.length), new Float64Array(window));
      const expected = cols.map((i) => cols.reduce((sum, j, b) => sum + ss.sampleCovariance(series(i), series(j)) * w[b], 0));
      expect(maxRelativeError(sw, expected, 1e-6)).toBeLessThan(1e-10);
    }
  });

  it('throw for a window past the end of the series and mismatched sizes', () => {
    expect(() => centreSeriesInto(bySeries, length, 80, 20, new Float64Array(count), new Float64Array(count * 20))).toThrow(/window 80..99 exceeds the series length 90/);
    expect(() => centreSeriesInto(bySeries, length, 0, 2, new Float64Array(count), new Float64Array(3))).toThrow(/out has length 3, expected 22/);
    expect(() => centredTimesWeights(new Float64Array(2 * count), 2, Int32Array.from([1]), new Float64Array(2), new Float64Array(1), new Float64Array(2))).toThrow(
      /w has length 2, expected 1/,
    );
  });
});

describe('CentredCrossProducts', () => {
  const random = createRandom(27);
  const n = 30;
  const w = 40;
  const x = randomReturns(random, 90, n, { scale: 0.01 }); // 90 dates x n, row-major
  const bySecurity = Float64Array.from({ length: n * 90 }, (_, e) => x[(e % 90) * n + Math.floor(e / 90)]);
  const centredAt = (first: number) => {
    const xc = new Float64Array(n * w);
    centreSeriesInto(bySecurity, 90, first, w, new Float64Array(n), xc);
    return xc;
  };

  /** simple-statistics' sample covariance (divisor w - 1) of two securities over dates first..first + w - 1. */
  const reference = (first: number, i: number, j: number) =>
    ss.sampleCovariance(Array.from(column(x, 90, n, i).slice(first, first + w)), Array.from(column(x, 90, n, j).slice(first, first + w)));

  it('gives S[cols, cols] of the window, matching simple-statistics, for sets in any order', () => {
    const products = new CentredCrossProducts(n);
    const xc = centredAt(10);
    for (const set of [[3, 7, 11], [11, 2, 7, 29], [0, 29, 3]]) {
      const cols = Int32Array.from(set);
      const s = products.subMatrix(xc, w, cols, w - 1, new Float64Array(cols.length ** 2));
      set.forEach((i, a) => set.forEach((j, b) => expect(Math.abs(s[a * set.length + b] - reference(10, i, j))).toBeLessThan(1e-15)));
    }
  });

  it('makes each sum once per window: a kept sum gives the same digits as a fresh one, and reset forgets them all', () => {
    const kept = new CentredCrossProducts(n);
    const set = Int32Array.from([5, 1, 17, 8]);
    kept.subMatrix(centredAt(0), w, Int32Array.from([17, 5, 8, 22]), w - 1, new Float64Array(16)); // 5, 8, 17 summed here first
    const fromKept = kept.subMatrix(centredAt(0), w, set, w - 1, new Float64Array(16));
    expect(fromKept).toEqual(new CentredCrossProducts(n).subMatrix(centredAt(0), w, set, w - 1, new Float64Array(16)));
    // a later window: without reset the kept sums of the first window would come back
    const later = centredAt(50);
    kept.reset();
    const s = kept.subMatrix(later, w, set, w, new Float64Array(16));
    expect(Math.abs(s[2 * 4 + 3] - (reference(50, 17, 8) * (w - 1)) / w)).toBeLessThan(1e-15);
  });

  it('throws for indices out of range and mismatched sizes', () => {
    const products = new CentredCrossProducts(n);
    expect(() => products.subMatrix(centredAt(0), w, Int32Array.from([3, 30]), w - 1, new Float64Array(4))).toThrow(/cols\[1\] = 30 is outside 0..29/);
    expect(() => products.subMatrix(new Float64Array(n * w - 1), w, Int32Array.from([3]), w - 1, new Float64Array(1))).toThrow(/xc has length/);
    expect(() => products.subMatrix(centredAt(0), w, Int32Array.from([3]), w - 1, new Float64Array(2))).toThrow(/out has length 2, expected 1/);
  });
});
