import { describe, expect, it } from 'vitest';
import { parametricES, parametricVaR, type ParametricLossInput } from '../../../src/risk/math/loss.ts';
import { normalQuantile } from '../../../src/risk/math/normal.ts';

const A = 252;

function input(overrides: Partial<ParametricLossInput>): ParametricLossInput {
  return { volAnnual: 0.16, periodsPerYear: A, horizonDays: 1, level: 0.99, value: 1_000_000, ...overrides };
}

describe('parametricVaR', () => {
  it('matches the model-building example in Hull ($10m, daily vol 2%: 10-day 99% VaR $1,473,621 with z = 2.33; from memory)', () => {
    // Hull, Options, Futures, and Other Derivatives, chapter on value at risk: daily
    // standard deviation $200,000, 10-day 99% VaR = 200,000 * sqrt(10) * 2.33
    const exact = parametricVaR(input({ volAnnual: 0.02 * Math.sqrt(A), horizonDays: 10, value: 10_000_000 }));
    expect(exact).toBeCloseTo(200_000 * Math.sqrt(10) * 2.3263478740408408, 4);
    expect((exact * 2.33) / normalQuantile(0.99)).toBeCloseTo(1_473_621, 0);
  });

  it('scales with the square root of the horizon and linearly with the value (common practice, no source)', () => {
    const oneDay = parametricVaR(input({}));
    expect(parametricVaR(input({ horizonDays: 10 })) / oneDay).toBeCloseTo(Math.sqrt(10), 14);
    expect(parametricVaR(input({ value: 3_000_000 })) / oneDay).toBeCloseTo(3, 14);
  });

  it('reports the same positive loss for a net short value', () => {
    expect(parametricVaR(input({ value: -1_000_000 }))).toBe(parametricVaR(input({})));
  });

  it('is zero for a riskless portfolio', () => {
    expect(parametricVaR(input({ volAnnual: 0 }))).toBe(0);
  });

  it('throws for a level outside (0, 1), a negative vol, a zero horizon and a missing value', () => {
    expect(() => parametricVaR(input({ level: 1 }))).toThrow(/parametricVaR: level must be in \(0, 1\), got 1/);
    expect(() => parametricVaR(input({ level: 99 }))).toThrow(/level must be in \(0, 1\)/);
    expect(() => parametricVaR(input({ volAnnual: -0.1 }))).toThrow(/volAnnual must be a non-negative/);
    expect(() => parametricVaR(input({ horizonDays: 0 }))).toThrow(/horizonDays must be a positive/);
    expect(() => parametricVaR(input({ value: Number.NaN }))).toThrow(/value must be finite/);
    expect(() => parametricVaR(input({ periodsPerYear: 0 }))).toThrow(/periodsPerYear must be a positive/);
  });
});

describe('parametricES', () => {
  it('is about the 99% VaR at 97.5% for a normal loss, the reason for that pair of levels (Basel Committee, Fundamental review of the trading book; from memory)', () => {
    // phi(1.96) / 0.025 = 2.3378 against z_0.99 = 2.3263
    const sigma = (0.16 / Math.sqrt(A)) * 1_000_000;
    expect(parametricES(input({ level: 0.975 })) / sigma).toBeCloseTo(2.3378, 4);
    expect(parametricES(input({ level: 0.975 })) / parametricVaR(input({ level: 0.99 }))).toBeCloseTo(1.005, 3);
  });

  it('equals the mean of the VaR over levels above alpha, ES = 1/(1 - alpha) int_alpha^1 VaR_u du (Acerbi and Tasche, 2002)', () => {
    const level = 0.975;
    const steps = 200_000;
    let sum = 0;
    // midpoint rule in u = alpha + (1 - alpha) v; the integrand's mild (sqrt-log) blow-up at v = 1 leaves about 1e-7
    for (let k = 0; k < steps; k++) sum += normalQuantile(level + ((1 - level) * (k + 0.5)) / steps);
    const integral = (sum / steps) * (0.16 / Math.sqrt(A)) * 1_000_000;
    expect(Math.abs(parametricES(input({ level })) / integral - 1)).toBeLessThan(1e-6);
  });

  it('exceeds the VaR at the same level and scales with sqrt(h)', () => {
    expect(parametricES(input({}))).toBeGreaterThan(parametricVaR(input({})));
    expect(parametricES(input({ horizonDays: 10 })) / parametricES(input({}))).toBeCloseTo(Math.sqrt(10), 14);
  });

  it('throws for a level outside (0, 1)', () => {
    expect(() => parametricES(input({ level: 0 }))).toThrow(/parametricES: level must be in \(0, 1\), got 0/);
  });
});
