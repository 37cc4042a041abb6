import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import {
  RISKMETRICS_DAILY_LAMBDA,
  ewmaCovarianceUpdate,
  ewmaCovarianceUpdateInPlace,
  ewmaUpperUpdateInPlace,
  ewmaVarianceUpdate,
} from '../../../src/risk/math/ewma.ts';
import { createRandom, randomReturns } from './fixtures.ts';

describe('ewmaVarianceUpdate', () => {
  it('matches the worked example in Hull (lambda 0.90, vol 1%, return 2% gives 1.14%; from memory of the example)', () => {
    // Hull, Options, Futures, and Other Derivatives, chapter on estimating volatilities:
    // sigma^2 = 0.9 * 0.01^2 + 0.1 * 0.02^2 = 0.00013, sigma = 1.140%
    const variance = ewmaVarianceUpdate(0.01 ** 2, 0.02, 0.9);
    expect(variance).toBeCloseTo(0.9 * 0.0001 + 0.1 * 0.0004, 18);
    expect(Math.sqrt(variance)).toBeCloseTo(0.0114, 4);
  });

  it('uses the RiskMetrics daily decay factor 0.94 (RiskMetrics Technical Document, J.P. Morgan/Reuters, 1996)', () => {
    expect(RISKMETRICS_DAILY_LAMBDA).toBe(0.94);
  });

  it('weights past squared returns by (1 - lambda) lambda^k, weights that add up to 1 (RiskMetrics Technical Document, 1996)', () => {
    // from zero, a run of unit squared returns gives sum_{k<K} (1 - lambda) lambda^k = 1 - lambda^K
    let variance = 0;
    for (let k = 1; k <= 250; k++) {
      variance = ewmaVarianceUpdate(variance, 1, RISKMETRICS_DAILY_LAMBDA);
      if (k === 1) expect(variance).toBeCloseTo(1 - RISKMETRICS_DAILY_LAMBDA, 15);
      if (k === 20) expect(variance).toBeCloseTo(1 - RISKMETRICS_DAILY_LAMBDA ** 20, 14);
    }
    expect(variance).toBeCloseTo(1, 6);
    // a single return k days back carries weight (1 - lambda) lambda^k
    let impulse = ewmaVarianceUpdate(0, 1, RISKMETRICS_DAILY_LAMBDA);
    for (let k = 1; k <= 10; k++) impulse = ewmaVarianceUpdate(impulse, 0, RISKMETRICS_DAILY_LAMBDA);
    expect(impulse).toBeCloseTo((1 - RISKMETRICS_DAILY_LAMBDA) * RISKMETRICS_DAILY_LAMBDA ** 10, 15);
  });

  it('throws for lambda outside (0, 1), a negative variance and a missing return', () => {
    expect(() => ewmaVarianceUpdate(0.0001, 0.01, 1)).toThrow(/lambda must be in \(0, 1\), got 1/);
    expect(() => ewmaVarianceUpdate(0.0001, 0.01, 0)).toThrow(/lambda must be in \(0, 1\), got 0/);
    expect(() => ewmaVarianceUpdate(-0.0001, 0.01, 0.94)).toThrow(/prevVariance must be a non-negative/);
    expect(() => ewmaVarianceUpdate(0.0001, Number.NaN, 0.94)).toThrow(/prevReturn must be finite/);
  });
});

describe('ewmaCovarianceUpdate', () => {
  const n = 5;
  const random = createRandom(41);
  const returns = randomReturns(random, 300, n, { scale: 0.01 });
  const row = (t: number): Float64Array => returns.subarray(t * n, (t + 1) * n);

  it('has on its diagonal the one-series update of each security', () => {
    let s: Float64Array = new Float64Array(n * n);
    const variances = new Float64Array(n);
    for (let t = 0; t < 300; t++) {
      s = ewmaCovarianceUpdate(s, n, row(t), 0.94);
      for (let j = 0; j < n; j++) variances[j] = ewmaVarianceUpdate(variances[j], row(t)[j], 0.94);
    }
    for (let j = 0; j < n; j++) expect(s[j * n + j] / variances[j]).toBeCloseTo(1, 13);
  });

  it("equals lambda S + (1 - lambda) r r' entry by entry", () => {
    const s = new Float64Array(n * n);
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) s[i * n + j] = i === j ? 0.0002 : 0.00005;
    const r = row(7);
    const next = ewmaCovarianceUpdate(s, n, r, 0.9);
    for (let i = 0; i < n; i++) {
      for (let j = 0; j < n; j++) expect(next[i * n + j]).toBeCloseTo(0.9 * s[i * n + j] + 0.1 * r[i] * r[j], 18);
    }
  });

  it('stays symmetric positive semi-definite (ml-matrix EigenvalueDecomposition)', () => {
    let s: Float64Array = new Float64Array(n * n);
    // fewer updates than securities from zero: rank-deficient, the edge of PSD
    for (let t = 0; t < 3; t++) s = ewmaCovarianceUpdate(s, n, row(t), 0.94);
    const m = new Matrix(n, n);
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) {
      expect(s[i * n + j]).toBe(s[j * n + i]);
      m.set(i, j, s[i * n + j]);
    }
    const eigenvalues = new EigenvalueDecomposition(m, { assumeSymmetric: true }).realEigenvalues;
    expect(Math.min(...eigenvalues)).toBeGreaterThanOrEqual(-1e-12 * Math.max(...eigenvalues));
  });

  it('does not mutate its inputs; the in-place variant writes the same numbers into s', () => {
    const s = ewmaCovarianceUpdate(new Float64Array(n * n), n, row(0), 0.94);
    const sCopy = Float64Array.from(s);
    const r = row(1);
    const rCopy = Float64Array.from(r);
    const next = ewmaCovarianceUpdate(s, n, r, 0.94);
    expect(s).toEqual(sCopy);
    expect(r).toEqual(rCopy);
    ewmaCovarianceUpdateInPlace(s, n, r, 0.94);
    expect(s).toEqual(next);
  });

  it('with an active mask, leaves every entry of an inactive security as it was and ignores its NaN return', () => {
    const s = ewmaCovarianceUpdate(new Float64Array(n * n), n, row(0), 0.94);
    const before = Float64Array.from(s);
    const r = Float64Array.from(row(1));
    r[2] = Number.NaN;
    const active = Uint8Array.from([1, 1, 0, 1, 1]);
    ewmaCovarianceUpdateInPlace(s, n, r, 0.94, active);
    for (let i = 0; i < n; i++) {
      for (let j = 0; j < n; j++) {
        const expected = i === 2 || j === 2 ? before[i * n + j] : 0.94 * before[i * n + j] + 0.06 * r[i] * r[j];
        expect(s[i * n + j]).toBeCloseTo(expected, 18);
      }
    }
  });

  it('throws for a missing return of an active security, wrong sizes and lambda outside (0, 1)', () => {
    const s = new Float64Array(n * n);
    const r = Float64Array.from(row(2));
    r[4] = Number.NaN;
    expect(() => ewmaCovarianceUpdateInPlace(s, n, r, 0.94)).toThrow(/r\[4\] = NaN is not finite/);
    expect(() => ewmaCovarianceUpdate(s, n, new Float64Array(n - 1), 0.94)).toThrow(/r has length 4, expected 5/);
    expect(() => ewmaCovarianceUpdateInPlace(s, n, row(2), 0.94, new Uint8Array(3))).toThrow(/active has length 3, expected 5/);
    expect(() => ewmaCovarianceUpdate(s, n, row(2), 1.2)).toThrow(/lambda must be in \(0, 1\)/);
    expect(s).toEqual(new Float64Array(n * n));
  });
});

describe('ewmaUpperUpdateInPlace', () => {
  const n = 6;
  const random = createRandom(12);
  const returns = randomReturns(random, 30, n, { scale: 0.01 });
  const row = (t: number) => returns.subarray(t * n, (t + 1) * n);

  it('writes on the upper triangle exactly the numbers of the full update, and never touches the lower one', () => {
    const full = new Float64Array(n * n);
    const upper = new Float64Array(n * n).fill(Number.NaN);
    for (let i = 0; i < n; i++) for (let j = i; j < n; j++) upper[i * n + j] = 0;
    const live = Int32Array.from([0, 2, 3, 5]);
    const active = Uint8Array.from([1, 0, 1, 1, 0, 1]);
    for (let t = 0; t < 30; t++) {
      const r = Float64Array.from(row(t));
      r[1] = Number.NaN;
      ewmaCovarianceUpdateInPlace(full, n, r, 0.94, active);
      ewmaUpperUpdateInPlace(upper, n, r, 0.94, live);
    }
    for (let i = 0; i < n; i++) {
      for (let j = 0; j < n; j++) {
        if (i > j) expect(upper[i * n + j]).toBeNaN();
        else expect(upper[i * n + j]).toBe(full[i * n + j]);
      }
    }
  });

  it('throws for a live list out of order, an index out of range and a missing live return', () => {
    const u = new Float64Array(n * n);
    const r = Float64Array.from(row(0));
    expect(() => ewmaUpperUpdateInPlace(u, n, r, 0.94, Int32Array.from([2, 1]))).toThrow(/live must be strictly ascending/);
    expect(() => ewmaUpperUpdateInPlace(u, n, r, 0.94, Int32Array.from([6]))).toThrow(/live\[0\] = 6 is outside 0..5/);
    r[3] = Number.NaN;
    expect(() => ewmaUpperUpdateInPlace(u, n, r, 0.94, Int32Array.from([3]))).toThrow(/r\[3\] = NaN is not finite/);
    expect(u).toEqual(new Float64Array(n * n));
  });
});
