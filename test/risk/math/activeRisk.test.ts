import { sampleCovariance as referenceCovariance, sampleStandardDeviation, sampleVariance } from 'simple-statistics';
import { describe, expect, it } from 'vitest';
import { activeContributions, betaToBenchmark, realizedTrackingError } from '../../../src/risk/math/activeRisk.ts';
import { sampleCovariance } from '../../../src/risk/math/covariance.ts';
import { MONTHLY_STOCKS } from './data/ledoitWolfReference.ts';

// Real monthly log returns of four stocks, 2000-2010 (vega-datasets 3.2.1 stocks.csv), A = 12.
const { rows, cols } = MONTHLY_STOCKS;
const x = Float64Array.from(MONTHLY_STOCKS.x);
const s = sampleCovariance(x, rows, cols);
const w = Float64Array.of(0.4, 0.3, 0.2, 0.1);
const b = Float64Array.of(0.25, 0.25, 0.25, 0.25);
const A = 12;

/** The constant-weight book's return series X v, as a plain array for simple-statistics. */
function seriesOf(v: Float64Array): number[] {
  return Array.from({ length: rows }, (_, t) => v.reduce((sum, vi, j) => sum + vi * x[t * cols + j], 0));
}

describe('activeContributions', () => {
  const result = activeContributions(s, cols, w, b, A);

  it('gives as tracking error sqrt(A) x the sample std of the active series X (w - b) (simple-statistics 7.12.1)', () => {
    const active = seriesOf(Float64Array.from(w, (wi, i) => wi - b[i]));
    expect(result.vol / (Math.sqrt(A) * sampleStandardDeviation(active))).toBeCloseTo(1, 12);
  });

  it('splits the tracking error by Euler over the active weights: the ccr add up to it', () => {
    expect(result.ccr.reduce((a, c) => a + c, 0) / result.vol).toBeCloseTo(1, 12);
    expect(result.pct.reduce((a, c) => a + c, 0)).toBeCloseTo(1, 12);
  });

  it('gives 0 for a portfolio equal to its benchmark (hand example, two uncorrelated securities)', () => {
    const diagonal = Float64Array.of(0.0004, 0, 0, 0.0001);
    expect(activeContributions(diagonal, 2, Float64Array.of(0.5, 0.5), Float64Array.of(0.5, 0.5), 252).vol).toBe(0);
    // w - b = (0.1, -0.1): TE = sqrt(252 (0.01 x 0.0004 + 0.01 x 0.0001))
    const te = activeContributions(diagonal, 2, Float64Array.of(0.6, 0.4), Float64Array.of(0.5, 0.5), 252).vol;
    expect(te).toBeCloseTo(Math.sqrt(252 * (0.01 * 0.0004 + 0.01 * 0.0001)), 15);
  });

  it('throws for mismatched lengths and a missing weight', () => {
    expect(() => activeContributions(s, cols, w, Float64Array.of(1), A)).toThrow(/activeContributions: b has length 1, expected 4/);
    expect(() => activeContributions(s, cols, Float64Array.of(0.4, 0.3, 0.2, Number.NaN), b, A)).toThrow(/weights of security 3 must be finite/);
  });

  it('does not mutate its inputs', () => {
    const copies = [Float64Array.from(s), Float64Array.from(w), Float64Array.from(b)];
    activeContributions(s, cols, w, b, A);
    expect([s, w, b]).toEqual(copies);
  });
});

describe('betaToBenchmark', () => {
  it('equals cov(r_p, r_b) / var(r_b) of the two books\' return series (simple-statistics 7.12.1)', () => {
    const portfolio = seriesOf(w);
    const benchmark = seriesOf(b);
    expect(betaToBenchmark(s, cols, w, b)).toBeCloseTo(referenceCovariance(portfolio, benchmark) / sampleVariance(benchmark), 12);
  });

  it('is 1 for the benchmark itself and NaN for a riskless benchmark', () => {
    expect(betaToBenchmark(s, cols, b, b)).toBeCloseTo(1, 14);
    expect(betaToBenchmark(Float64Array.of(0.0004, 0, 0, 0), 2, Float64Array.of(1, 0), Float64Array.of(0, 1))).toBeNaN();
  });
});

describe('realizedTrackingError', () => {
  it('equals the ex-ante figure when the weights stay constant and S is the sample covariance of the same window', () => {
    const realized = realizedTrackingError(Float64Array.from(seriesOf(w)), Float64Array.from(seriesOf(b)), A);
    expect(realized / activeContributions(s, cols, w, b, A).vol).toBeCloseTo(1, 12);
  });

  it('is sqrt(A) x the sample std of r_p - r_b (hand example: active returns 0.01, -0.01 give std sqrt(0.0002))', () => {
    expect(realizedTrackingError(Float64Array.of(0.02, -0.005), Float64Array.of(0.01, 0.005), 252)).toBeCloseTo(Math.sqrt(252 * 0.0002), 15);
  });

  it('does not mutate its inputs', () => {
    const portfolio = Float64Array.of(0.02, -0.005);
    const benchmark = Float64Array.of(0.01, 0.005);
    realizedTrackingError(portfolio, benchmark, 252);
    betaToBenchmark(s, cols, w, b);
    expect([Array.from(portfolio), Array.from(benchmark)]).toEqual([[0.02, -0.005], [0.01, 0.005]]);
    expect(Array.from(w)).toEqual([0.4, 0.3, 0.2, 0.1]);
  });

  it('throws for one date, a missing return and mismatched lengths', () => {
    expect(() => realizedTrackingError(Float64Array.of(0.01), Float64Array.of(0.02), 252)).toThrow(/portfolio.length must be an integer >= 2/);
    expect(() => realizedTrackingError(Float64Array.of(0.01, Number.NaN), Float64Array.of(0.02, 0), 252)).toThrow(/returns of date 1 must be finite/);
    expect(() => realizedTrackingError(Float64Array.of(0.01, 0), Float64Array.of(0.02), 252)).toThrow(/benchmark has length 1, expected 2/);
  });
});
