import { describe, expect, it } from 'vitest';
import { sampleCovariance, matrixVector } from '../../../src/risk/math/covariance.ts';
import { volatilityChange, volatilityChangeFromProducts } from '../../../src/risk/math/volChange.ts';
import { createRandom, randomReturns } from './fixtures.ts';

const sum = (v: Float64Array): number => v.reduce((a, c) => a + c, 0);

describe('volatilityChange', () => {
  // two uncorrelated securities, daily figures (A = 1): yesterday all in the first at 1% vol;
  // today half and half, and the first's variance has quadrupled
  const s0 = Float64Array.of(0.0001, 0, 0, 0.0004);
  const s1 = Float64Array.of(0.0004, 0, 0, 0.0004);
  const w0 = Float64Array.of(1, 0);
  const w1 = Float64Array.of(0.5, 0.5);
  const result = volatilityChange(s0, s1, 2, w0, w1, 1);

  it('splits the change with the symmetric formula of the SPEC (section 9; hand example)', () => {
    const vol = { w0s0: 0.01, w1s0: Math.sqrt(0.25 * 0.0001 + 0.25 * 0.0004), w0s1: 0.02, w1s1: Math.sqrt(0.25 * 0.0004 * 2) };
    expect(result.volPrev).toBeCloseTo(vol.w0s0, 15);
    expect(result.volNow).toBeCloseTo(vol.w1s1, 15);
    expect(result.fromWeights).toBeCloseTo(0.5 * (vol.w1s0 - vol.w0s0 + (vol.w1s1 - vol.w0s1)), 15);
    expect(result.fromMarket).toBeCloseTo(0.5 * (vol.w0s1 - vol.w0s0 + (vol.w1s1 - vol.w1s0)), 15);
    expect(result.fromWeights + result.fromMarket).toBeCloseTo(result.volNow - result.volPrev, 15);
  });

  it('gives the weights part per security, adding up to it exactly (trade times marginal risk at the midpoint)', () => {
    // under S0: s(w1) - s(w0) = A dw' S0 (w0 + w1) / (s1 + s0), dw = (-0.5, 0.5), w0 + w1 = (1.5, 0.5)
    const under0 = Math.sqrt(0.25 * 0.0001 + 0.25 * 0.0004) + 0.01;
    const under1 = Math.sqrt(0.25 * 0.0004 * 2) + 0.02;
    const first = 0.5 * ((-0.5 * 0.0001 * 1.5) / under0 + (-0.5 * 0.0004 * 1.5) / under1);
    const second = 0.5 * ((0.5 * 0.0004 * 0.5) / under0 + (0.5 * 0.0004 * 0.5) / under1);
    expect(result.fromWeightsBySecurity[0]).toBeCloseTo(first, 15);
    expect(result.fromWeightsBySecurity[1]).toBeCloseTo(second, 15);
    expect(sum(result.fromWeightsBySecurity)).toBeCloseTo(result.fromWeights, 15);
  });

  it('does not depend on the order of the steps: run backwards in time, both parts change sign', () => {
    const backwards = volatilityChange(s1, s0, 2, w1, w0, 1);
    expect(backwards.fromWeights).toBeCloseTo(-result.fromWeights, 15);
    expect(backwards.fromMarket).toBeCloseTo(-result.fromMarket, 15);
  });

  it('puts everything in the market for unchanged weights and in the weights for an unchanged covariance', () => {
    const marketOnly = volatilityChange(s0, s1, 2, w1, w1, 252);
    expect(marketOnly.fromWeights).toBe(0);
    expect(Array.from(marketOnly.fromWeightsBySecurity)).toEqual([0, 0]);
    expect(marketOnly.fromMarket).toBeCloseTo(marketOnly.volNow - marketOnly.volPrev, 15);
    const weightsOnly = volatilityChange(s0, s0, 2, w0, w1, 252);
    expect(weightsOnly.fromMarket).toBeCloseTo(0, 15);
  });

  it('adds up per security on a correlated long-short book of 8 securities (seeded, invented returns)', () => {
    const random = createRandom(77);
    const n = 8;
    const x = randomReturns(random, 130, n, { scale: 0.012 });
    const before = sampleCovariance(x.subarray(0, 63 * n), 63, n);
    const after = sampleCovariance(x.subarray(67 * n), 63, n);
    const a = Float64Array.from({ length: n }, () => random.uniform() - 0.3);
    const c = Float64Array.from(a, (v) => v + 0.2 * (random.uniform() - 0.5));
    const split = volatilityChange(before, after, n, a, c, 252);
    expect(sum(split.fromWeightsBySecurity) / split.fromWeights).toBeCloseTo(1, 11);
    expect(split.fromWeights + split.fromMarket).toBeCloseTo(split.volNow - split.volPrev, 14);
  });

  it('gives an all-cash book on both dates no change at all', () => {
    const cash = volatilityChange(new Float64Array(4), new Float64Array(4), 2, Float64Array.of(0, 0), Float64Array.of(0, 0), 252);
    expect([cash.volPrev, cash.volNow, cash.fromWeights, cash.fromMarket]).toEqual([0, 0, 0, 0]);
  });

  it('throws for mismatched shapes, a missing weight and a bad periodsPerYear', () => {
    expect(() => volatilityChange(s0, s1, 2, w0, Float64Array.of(1), 1)).toThrow(/volatilityChange: w1 has length 1, expected 2/);
    expect(() => volatilityChange(s0, Float64Array.of(1), 2, w0, w1, 1)).toThrow(/s1 has length 1, expected 4/);
    expect(() => volatilityChange(s0, s1, 2, w0, Float64Array.of(0.5, Number.NaN), 1)).toThrow(/weights of security 1 must be finite/);
    expect(() => volatilityChange(s0, s1, 2, w0, w1, 0)).toThrow(/periodsPerYear must be a positive/);
  });

  it('does not mutate its inputs', () => {
    const copies = [s0, s1, w0, w1].map((v) => Float64Array.from(v));
    volatilityChange(s0, s1, 2, w0, w1, 1);
    expect([s0, s1, w0, w1]).toEqual(copies);
  });
});

describe('volatilityChangeFromProducts', () => {
  it('gives the split of the matrix form from the four products S0 w0, S0 w1, S1 w0, S1 w1 (seeded, invented returns)', () => {
    const random = createRandom(5);
    const n = 6;
    const x = randomReturns(random, 100, n, { scale: 0.01 });
    const s0 = sampleCovariance(x.subarray(0, 40 * n), 40, n);
    const s1 = sampleCovariance(x.subarray(41 * n, 81 * n), 40, n);
    const w0 = Float64Array.from({ length: n }, () => random.uniform());
    const w1 = Float64Array.from(w0, (v, i) => (i === 2 ? 0 : v * 1.1));
    const products = volatilityChangeFromProducts(
      { sw0: matrixVector(s0, n, w0), sw1: matrixVector(s0, n, w1) },
      { sw0: matrixVector(s1, n, w0), sw1: matrixVector(s1, n, w1) },
      w0,
      w1,
      252,
    );
    const matrices = volatilityChange(s0, s1, n, w0, w1, 252);
    expect(products.fromWeights).toBeCloseTo(matrices.fromWeights, 15);
    expect(products.fromMarket).toBeCloseTo(matrices.fromMarket, 15);
    for (let i = 0; i < n; i++) expect(products.fromWeightsBySecurity[i]).toBeCloseTo(matrices.fromWeightsBySecurity[i], 15);
  });

  it('throws when a product does not match the weights', () => {
    const v = Float64Array.of(1, 2);
    expect(() => volatilityChangeFromProducts({ sw0: v, sw1: Float64Array.of(1) }, { sw0: v, sw1: v }, v, v, 252)).toThrow(
      /volatilityChangeFromProducts: S0 w1 has length 1, expected 2/,
    );
  });
});
