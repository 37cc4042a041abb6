import { describe, expect, it } from 'vitest';
import * as ss from 'simple-statistics';
import { annualizedReturn, annualizedVolatility } from '../../../src/risk/math/annualize.ts';
import { createRandom, randomReturns } from './fixtures.ts';

describe('annualizedReturn', () => {
  it('gives back 10% from a year of equal daily log returns ln(1.10) / 252 (continuous compounding; common practice, no source)', () => {
    expect(annualizedReturn(Math.log(1.1) / 252, 252)).toBeCloseTo(0.1, 14);
    expect(annualizedReturn(0, 252)).toBe(0);
    expect(annualizedReturn(Math.log(0.8) / 252, 252)).toBeCloseTo(-0.2, 14);
  });

  it('keeps full relative accuracy for a tiny mean, where exp(x) - 1 would lose half its digits', () => {
    const x = 252 * 1e-12;
    expect(Math.abs(annualizedReturn(1e-12, 252) / (x + (x * x) / 2) - 1)).toBeLessThan(1e-15);
  });

  it('throws for a bad periodsPerYear and a missing mean', () => {
    expect(() => annualizedReturn(0.001, 0)).toThrow(/periodsPerYear must be a positive/);
    expect(() => annualizedReturn(Number.NaN, 252)).toThrow(/meanLogReturn must be finite/);
  });
});

describe('annualizedVolatility', () => {
  it('gives sqrt(252) * 1% = 15.87% for a daily variance of 0.0001 (square-root-of-time rule)', () => {
    expect(annualizedVolatility(0.0001, 252)).toBeCloseTo(0.1587450786638754, 15);
    expect(annualizedVolatility(0, 252)).toBe(0);
  });

  it('equals sqrt(A) times the simple-statistics sampleStandardDeviation of the daily returns', () => {
    const daily = Array.from(randomReturns(createRandom(61), 63, 1, { scale: 0.01 }));
    expect(annualizedVolatility(ss.sampleVariance(daily), 252) / (Math.sqrt(252) * ss.sampleStandardDeviation(daily))).toBeCloseTo(1, 14);
  });

  it('throws for a negative variance', () => {
    expect(() => annualizedVolatility(-1e-6, 252)).toThrow(/dailyVariance must be a non-negative/);
  });
});
