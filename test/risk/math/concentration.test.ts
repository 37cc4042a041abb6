import { describe, expect, it } from 'vitest';
import { effectiveNumberOfHoldings, largestWeightsShare } from '../../../src/risk/math/concentration.ts';

describe('effectiveNumberOfHoldings', () => {
  it('inverts the HHI of the U.S. merger guidelines example: shares 30, 30, 20, 20 give HHI 2,600 (U.S. DOJ/FTC Horizontal Merger Guidelines; from memory)', () => {
    const n = effectiveNumberOfHoldings(Float64Array.of(0.3, 0.3, 0.2, 0.2));
    expect(10_000 / n).toBeCloseTo(2600, 9);
    expect(n).toBeCloseTo(10_000 / 2600, 12);
  });

  it('is n for n equal weights and 1 for a single holding', () => {
    expect(effectiveNumberOfHoldings(new Float64Array(40).fill(1 / 40))).toBeCloseTo(40, 11);
    expect(effectiveNumberOfHoldings(Float64Array.of(1))).toBe(1);
  });

  it('throws when every weight is zero or one is missing', () => {
    expect(() => effectiveNumberOfHoldings(new Float64Array(3))).toThrow(/effectiveNumberOfHoldings: every weight is zero/);
    expect(() => effectiveNumberOfHoldings(Float64Array.of(0.5, Number.NaN))).toThrow(/w\[1\] must be finite/);
  });
});

describe('largestWeightsShare', () => {
  it('adds up the 10 largest weights (common practice, no source; hand example)', () => {
    // 13 holdings: 0.2, 0.15, 0.1 x 5, 0.05 x 2, 0.0125 x 4 (adding up to 1) -> largest ten = 0.2 + 0.15 + 0.5 + 0.1 + 0.0125
    const w = Float64Array.of(0.0125, 0.1, 0.2, 0.05, 0.1, 0.0125, 0.15, 0.1, 0.05, 0.1, 0.0125, 0.1, 0.0125);
    expect(w.reduce((a, c) => a + c, 0)).toBeCloseTo(1, 14);
    expect(largestWeightsShare(w)).toBeCloseTo(0.9625, 14);
    expect(largestWeightsShare(w, 1)).toBeCloseTo(0.2, 15);
  });

  it('counts a short by its size and takes every holding of a book with fewer than 10', () => {
    expect(largestWeightsShare(Float64Array.of(1.3, -0.5, 0.2), 2)).toBeCloseTo(1.8, 15);
    expect(largestWeightsShare(Float64Array.of(0.6, 0.4))).toBeCloseTo(1, 15);
  });

  it('throws for a count below 1 and a missing weight; does not mutate its input', () => {
    expect(() => largestWeightsShare(Float64Array.of(1), 0)).toThrow(/count must be an integer >= 1, got 0/);
    expect(() => largestWeightsShare(Float64Array.of(Number.NaN))).toThrow(/w\[0\] must be finite/);
    const w = Float64Array.of(0.1, 0.9);
    largestWeightsShare(w);
    expect(Array.from(w)).toEqual([0.1, 0.9]);
  });
});
