import { Matrix, inverse } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { covarianceTimesWeights, matrixVector, sampleCovariance } from '../../../src/risk/math/covariance.ts';
import { diversificationRatio, eulerContributions, minimumVarianceWeights } from '../../../src/risk/math/contributions.ts';
import { createRandom, maxRelativeError, randomReturns, randomWeights } from './fixtures.ts';

const A = 252;
const n = 7;
const random = createRandom(51);
const returns = randomReturns(random, 126, n, { scale: 0.011 });
const s = sampleCovariance(returns, 126, n);
// a long-short book: weights around -0.3 .. 0.7
const w = randomWeights(random, n);

function volOf(weights: Float64Array): number {
  return Math.sqrt(A * covarianceTimesWeights(returns, 126, n, weights).variance);
}

describe('eulerContributions', () => {
  const { sw } = covarianceTimesWeights(returns, 126, n, w);
  const result = eulerContributions(sw, w, A);

  it('gives vol = sqrt(A w\'Sw)', () => {
    expect(result.vol).toBeCloseTo(volOf(w), 15);
  });

  it('satisfies the Euler identity: the ccr add up to vol and the pct to 1 (Euler\'s theorem for 1-homogeneous functions)', () => {
    const sumCcr = result.ccr.reduce((a, b) => a + b, 0);
    const sumPct = result.pct.reduce((a, b) => a + b, 0);
    expect(sumCcr / result.vol).toBeCloseTo(1, 13);
    expect(sumPct).toBeCloseTo(1, 13);
  });

  it('gives as mcr the derivative d vol / d w_i (central differences; common practice, no source)', () => {
    const h = 1e-6;
    for (let i = 0; i < n; i++) {
      const up = Float64Array.from(w);
      const down = Float64Array.from(w);
      up[i] += h;
      down[i] -= h;
      const derivative = (volOf(up) - volOf(down)) / (2 * h);
      expect(Math.abs(result.mcr[i] - derivative)).toBeLessThan(1e-7);
    }
  });

  it('gives a single holding all of the risk: mcr = ccr = vol, pct = 1', () => {
    const single = eulerContributions(Float64Array.from([0.0004]), Float64Array.from([1]), A);
    expect(single.vol).toBeCloseTo(Math.sqrt(A * 0.0004), 15);
    expect(single.mcr[0]).toBeCloseTo(single.vol, 15);
    expect(single.ccr[0]).toBeCloseTo(single.vol, 15);
    expect(single.pct[0]).toBeCloseTo(1, 15);
  });

  it('gives an all-cash portfolio vol 0, contributions 0 and pct NaN (undefined share of no risk)', () => {
    const cash = eulerContributions(new Float64Array(3), Float64Array.from([0, 0, 1]), A);
    expect(cash.vol).toBe(0);
    expect(Array.from(cash.mcr)).toEqual([0, 0, 0]);
    expect(Array.from(cash.ccr)).toEqual([0, 0, 0]);
    expect(cash.pct.every(Number.isNaN)).toBe(true);
  });

  it('throws for a negative w\'Sw beyond rounding, mismatched lengths and a bad periodsPerYear', () => {
    expect(() => eulerContributions(Float64Array.from([-0.0004]), Float64Array.from([1]), A)).toThrow(/not positive semi-definite/);
    expect(() => eulerContributions(new Float64Array(2), new Float64Array(3), A)).toThrow(/sw has length 2, expected 3/);
    expect(() => eulerContributions(new Float64Array(1), new Float64Array(1), 0)).toThrow(/periodsPerYear must be a positive/);
  });

  it('does not mutate its inputs', () => {
    const swCopy = Float64Array.from(sw);
    const wCopy = Float64Array.from(w);
    eulerContributions(sw, w, A);
    expect(sw).toEqual(swCopy);
    expect(w).toEqual(wCopy);
  });
});

describe('diversificationRatio', () => {
  it('is 1 for a single holding', () => {
    expect(diversificationRatio(Float64Array.from([1]), Float64Array.from([0.2]), 0.2)).toBeCloseTo(1, 15);
  });

  it('is sqrt(2) for two uncorrelated holdings of equal vol at equal weights (common practice, no source)', () => {
    const portfolioVol = Math.sqrt(0.5 ** 2 * 0.04 + 0.5 ** 2 * 0.04);
    expect(diversificationRatio(Float64Array.from([0.5, 0.5]), Float64Array.from([0.2, 0.2]), portfolioVol)).toBeCloseTo(Math.SQRT2, 14);
  });

  it('stays >= 1 for long-short books, by the triangle inequality', () => {
    const local = createRandom(52);
    for (let trial = 0; trial < 50; trial++) {
      const weights = randomWeights(local, n);
      const vols = new Float64Array(n);
      for (let j = 0; j < n; j++) vols[j] = Math.sqrt(A * s[j * n + j]);
      expect(diversificationRatio(weights, vols, volOf(weights))).toBeGreaterThanOrEqual(1 - 1e-12);
    }
  });

  it('is NaN for zero portfolio volatility and throws for a negative volatility', () => {
    expect(Number.isNaN(diversificationRatio(Float64Array.from([1]), Float64Array.from([0]), 0))).toBe(true);
    expect(() => diversificationRatio(Float64Array.from([1]), Float64Array.from([-0.1]), 0.1)).toThrow(/vols\[0\] must be >= 0/);
    expect(() => diversificationRatio(Float64Array.from([1]), Float64Array.from([0.1]), -1)).toThrow(/portfolioVol must be >= 0/);
  });
});

describe('minimumVarianceWeights', () => {
  it('matches Bodie, Kane and Marcus (sigma 12% and 20%, correlation 0.3: weights 0.82 / 0.18, sigma 11.45%; from memory)', () => {
    // Bodie, Kane and Marcus, Investments, chapter on optimal risky portfolios (debt and equity funds)
    const cov = 0.3 * 0.12 * 0.2;
    const two = Float64Array.from([0.12 ** 2, cov, cov, 0.2 ** 2]);
    const weights = minimumVarianceWeights(two, 2);
    expect(weights[0]).toBeCloseTo(0.82, 10);
    expect(weights[1]).toBeCloseTo(0.18, 10);
    const variance = weights[0] ** 2 * two[0] + weights[1] ** 2 * two[3] + 2 * weights[0] * weights[1] * cov;
    expect(Math.round(Math.sqrt(variance) * 10000) / 100).toBe(11.45);
  });

  it('equals S^-1 1 / 1\'S^-1 1 with ml-matrix inverse, and S w has equal entries (first-order condition)', () => {
    const weights = minimumVarianceWeights(s, n);
    const m = new Matrix(n, n);
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) m.set(i, j, s[i * n + j]);
    const raw = inverse(m).mmul(Matrix.ones(n, 1)).getColumn(0);
    const total = raw.reduce((a, b) => a + b, 0);
    expect(maxRelativeError(weights, raw.map((v) => v / total), 1e-6)).toBeLessThan(1e-9);
    expect(weights.reduce((a, b) => a + b, 0)).toBeCloseTo(1, 14);
    const gradient = matrixVector(s, n, weights);
    for (let i = 1; i < n; i++) expect(gradient[i] / gradient[0]).toBeCloseTo(1, 9);
  });

  it('has no portfolio of lower variance among random fully invested ones', () => {
    const best = volOf(minimumVarianceWeights(s, n));
    const local = createRandom(53);
    for (let trial = 0; trial < 100; trial++) {
      const weights = randomWeights(local, n);
      const total = weights.reduce((a, b) => a + b, 0);
      for (let j = 0; j < n; j++) weights[j] /= total;
      expect(volOf(weights)).toBeGreaterThanOrEqual(best * (1 - 1e-12));
    }
  });

  it('throws for a singular covariance (two identical securities) and a wrong size', () => {
    const singular = Float64Array.from([0.04, 0.04, 0.04, 0.04]);
    expect(() => minimumVarianceWeights(singular, 2)).toThrow(/not positive definite/);
    expect(() => minimumVarianceWeights(new Float64Array(3), 2)).toThrow(/s has length 3, expected 4/);
  });

  it('accepts a matrix symmetric only to rounding and does not mutate it', () => {
    const nearly = Float64Array.from(s);
    nearly[1] *= 1 + 1e-15;
    const copy = Float64Array.from(nearly);
    expect(() => minimumVarianceWeights(nearly, n)).not.toThrow();
    expect(nearly).toEqual(copy);
  });
});
