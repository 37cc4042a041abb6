import { describe, expect, it } from 'vitest';
import * as ss from 'simple-statistics';
import { mean, sampleStdDev, sampleVariance } from '../../../src/risk/math/moments.ts';
import { createRandom, randomReturns } from './fixtures.ts';

describe('mean, sampleVariance, sampleStdDev', () => {
  const random = createRandom(11);
  const series = randomReturns(random, 500, 1, { scale: 0.01 });

  it('match simple-statistics (mean, sampleVariance, sampleStandardDeviation) on random daily returns', () => {
    const values = Array.from(series);
    expect(mean(series)).toBeCloseTo(ss.mean(values), 15);
    expect(sampleVariance(series) / ss.sampleVariance(values)).toBeCloseTo(1, 12);
    expect(sampleStdDev(series) / ss.sampleStandardDeviation(values)).toBeCloseTo(1, 12);
  });

  it('divide by n - 1: 2, 4, 4, 4, 5, 5, 7, 9 has sample variance 32/7 (textbook example, population variance 4; from memory)', () => {
    const x = Float64Array.from([2, 4, 4, 4, 5, 5, 7, 9]);
    expect(mean(x)).toBe(5);
    expect(sampleVariance(x)).toBeCloseTo(32 / 7, 14);
    expect(sampleStdDev(x)).toBeCloseTo(Math.sqrt(32 / 7), 14);
  });

  it('keep their digits at a large offset: 1e9 + (4, 7, 13, 16) has variance 30 (Wikipedia, "Algorithms for calculating variance"; from memory)', () => {
    // the naive sum-of-squares formula returns garbage here; two passes stay exact
    const x = Float64Array.from([4, 7, 13, 16].map((v) => 1e9 + v));
    expect(sampleVariance(x)).toBeCloseTo(30, 9);
  });

  it('give zero variance, never a negative one, for a constant series', () => {
    const x = new Float64Array(1000).fill(0.1);
    expect(sampleVariance(x)).toBe(0);
    expect(sampleStdDev(x)).toBe(0);
  });

  it('throw for an empty series (mean) and a single value (variance)', () => {
    expect(() => mean(new Float64Array(0))).toThrow(/mean: x.length must be an integer >= 1/);
    expect(() => sampleVariance(Float64Array.from([0.01]))).toThrow(/sampleVariance: x.length must be an integer >= 2, got 1/);
    expect(() => sampleStdDev(Float64Array.from([0.01]))).toThrow(/sampleVariance/);
  });

  it('do not mutate their input', () => {
    const copy = Float64Array.from(series);
    mean(series);
    sampleVariance(series);
    sampleStdDev(series);
    expect(series).toEqual(copy);
  });
});
