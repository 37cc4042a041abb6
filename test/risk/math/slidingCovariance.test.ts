import { describe, expect, it } from 'vitest';
import { sampleCovariance, subMatrixVector } from '../../../src/risk/math/covariance.ts';
import { SlidingCovariance } from '../../../src/risk/math/slidingCovariance.ts';
import { createRandom, randomReturns } from './fixtures.ts';

const n = 8;
const window = 63;

/** Rows end - count + 1 .. end of a row-major history, as one matrix. */
function lastRows(history: Float64Array, end: number, count: number): Float64Array {
  return history.slice((end - count + 1) * n, (end + 1) * n);
}

/**
 * Worst disagreement with the two-pass covariance, each entry relative to
 * sqrt(S_ii S_jj) (the scale of the entry: a correlation of 1e-10 error); NaN entries of
 * the reference (columns with a missing value) must be NaN in the sliding one too.
 */
function worstError(sliding: SlidingCovariance, reference: Float64Array): number {
  let worst = 0;
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) {
      const expected = reference[i * n + j];
      const actual = sliding.covariance(i, j);
      if (Number.isNaN(expected)) {
        if (!Number.isNaN(actual)) return Infinity;
        continue;
      }
      worst = Math.max(worst, Math.abs(actual - expected) / Math.sqrt(reference[i * n + i] * reference[j * n + j]));
    }
  }
  return worst;
}

function replay(history: Float64Array, rows: number, refreshEvery?: number): number {
  const sliding = new SlidingCovariance(n, window, refreshEvery);
  let worst = 0;
  for (let t = 0; t < rows; t++) {
    sliding.push(history.subarray(t * n, (t + 1) * n));
    if (t >= window - 1) worst = Math.max(worst, worstError(sliding, sampleCovariance(lastRows(history, t, window), window, n)));
  }
  return worst;
}

describe('SlidingCovariance', () => {
  it('matches the two-pass sampleCovariance on every window over 3,000 daily returns (scale 0.01) to 1e-10 relative', () => {
    const history = randomReturns(createRandom(31), 3000, n, { scale: 0.01 });
    expect(replay(history, 3000)).toBeLessThan(1e-10);
  });

  it('keeps 1e-10 with returns around 0.5, where raw sums of squares would cancel', () => {
    const history = randomReturns(createRandom(32), 3000, n, { scale: 0.01, offset: 0.5 });
    expect(replay(history, 3000)).toBeLessThan(1e-10);
  });

  it('gives the same numbers when refreshed exactly on every push', () => {
    const history = randomReturns(createRandom(33), 500, n, { scale: 0.01, offset: 0.5 });
    const every = new SlidingCovariance(n, window, 1);
    const default256 = new SlidingCovariance(n, window);
    for (let t = 0; t < 500; t++) {
      every.push(history.subarray(t * n, (t + 1) * n));
      default256.push(history.subarray(t * n, (t + 1) * n));
    }
    for (let i = 0; i < n; i++) {
      for (let j = 0; j < n; j++) expect(Math.abs(every.covariance(i, j) - default256.covariance(i, j))).toBeLessThan(1e-15);
    }
  });

  it('while filling, holds the rows so far (divisor count - 1) and reports no column complete', () => {
    const history = randomReturns(createRandom(34), window, n, { scale: 0.01 });
    const sliding = new SlidingCovariance(n, window);
    for (let t = 0; t < window; t++) {
      sliding.push(history.subarray(t * n, (t + 1) * n));
      expect(sliding.count).toBe(t + 1);
      expect(sliding.complete(0)).toBe(t === window - 1);
      if (t >= 1) expect(worstError(sliding, sampleCovariance(lastRows(history, t, t + 1), t + 1, n))).toBeLessThan(1e-12);
    }
    expect(Number.isNaN(new SlidingCovariance(n, window).covariance(0, 0))).toBe(true);
  });

  it('marks a column with a missing value incomplete for exactly `window` pushes, keeps the others exact, and is exact again after', () => {
    const rows = 400;
    const history = randomReturns(createRandom(35), rows, n, { scale: 0.01, offset: 0.2 });
    const gapAt = 150;
    history[gapAt * n + 3] = Number.NaN;
    history[(gapAt + 10) * n + 3] = Number.NaN; // a second gap: clean only when both have left
    history[200 * n + 5] = Number.NaN;
    const sliding = new SlidingCovariance(n, window, 1000);
    for (let t = 0; t < rows; t++) {
      sliding.push(history.subarray(t * n, (t + 1) * n));
      if (t < window - 1) continue;
      const inWindow = (at: number): boolean => at <= t && at > t - window;
      expect(sliding.complete(3)).toBe(!inWindow(gapAt) && !inWindow(gapAt + 10));
      expect(sliding.complete(5)).toBe(!inWindow(200));
      expect(sliding.complete(0)).toBe(true);
      // sampleCovariance lets NaN propagate, which is exactly the contract for an incomplete column
      expect(worstError(sliding, sampleCovariance(lastRows(history, t, window), window, n))).toBeLessThan(1e-10);
    }
    expect(Number.isNaN(sliding.mean(3))).toBe(false);
  });

  it('treats Infinity as missing too', () => {
    const sliding = new SlidingCovariance(2, 3);
    sliding.push(Float64Array.from([0.01, Infinity]));
    sliding.push(Float64Array.from([0.02, 0.01]));
    sliding.push(Float64Array.from([-0.01, 0.03]));
    expect(sliding.complete(0)).toBe(true);
    expect(sliding.complete(1)).toBe(false);
    expect(Number.isNaN(sliding.variance(1))).toBe(true);
  });

  it('mean, variance and subMatrixVector agree with the two-pass results on the window', () => {
    const history = randomReturns(createRandom(36), 200, n, { scale: 0.01 });
    const sliding = new SlidingCovariance(n, window);
    for (let t = 0; t < 200; t++) sliding.push(history.subarray(t * n, (t + 1) * n));
    const windowRows = lastRows(history, 199, window);
    const s = sampleCovariance(windowRows, window, n);
    for (let j = 0; j < n; j++) {
      let sum = 0;
      for (let r = 0; r < window; r++) sum += windowRows[r * n + j];
      expect(sliding.mean(j)).toBeCloseTo(sum / window, 15);
      expect(sliding.variance(j) / s[j * n + j]).toBeCloseTo(1, 11);
    }
    const idx = Int32Array.from([7, 0, 4]);
    const v = Float64Array.from([0.5, 0.3, 0.2]);
    const expected = subMatrixVector(s, n, idx, v);
    const actual = sliding.subMatrixVector(idx, v);
    for (let a = 0; a < 3; a++) expect(Math.abs(actual[a] - expected[a])).toBeLessThan(1e-12 * s[0]);
  });

  it('copies the pushed row: the caller may reuse its buffer, and the row is not changed', () => {
    const buffer = new Float64Array(2);
    const sliding = new SlidingCovariance(2, 2);
    buffer.set([0.01, 0.02]);
    sliding.push(buffer);
    expect(Array.from(buffer)).toEqual([0.01, 0.02]);
    buffer.set([0.03, -0.02]);
    sliding.push(buffer);
    buffer.fill(99);
    // rows (0.01, 0.02) and (0.03, -0.02): var 0.0002, 0.0008, cov -0.0004
    expect(sliding.variance(0)).toBeCloseTo(0.0002, 15);
    expect(sliding.variance(1)).toBeCloseTo(0.0008, 15);
    expect(sliding.covariance(0, 1)).toBeCloseTo(-0.0004, 15);
    expect(sliding.covariance(1, 0)).toBe(sliding.covariance(0, 1));
  });

  it('throws for a window below 2, a row of the wrong length, and subMatrixVector on an incomplete column', () => {
    expect(() => new SlidingCovariance(3, 1)).toThrow(/window must be an integer >= 2, got 1/);
    expect(() => new SlidingCovariance(0, 5)).toThrow(/n must be an integer >= 1/);
    expect(() => new SlidingCovariance(3, 5, 0)).toThrow(/refreshEvery must be an integer >= 1/);
    const sliding = new SlidingCovariance(3, 5);
    expect(() => sliding.push(new Float64Array(2))).toThrow(/row has length 2, expected 3/);
    sliding.push(Float64Array.from([0.01, Number.NaN, 0.0]));
    expect(() => sliding.subMatrixVector(Int32Array.from([0]), Float64Array.from([1]))).toThrow(/needs at least 2 rows, holds 1/);
    sliding.push(Float64Array.from([0.02, 0.01, 0.01]));
    expect(() => sliding.subMatrixVector(Int32Array.from([0, 1]), Float64Array.from([0.5, 0.5]))).toThrow(
      /column 1 has a missing value in the window/,
    );
    expect(() => sliding.subMatrixVector(Int32Array.from([3]), Float64Array.from([1]))).toThrow(/idx\[0\] = 3 is outside 0..2/);
  });
});
