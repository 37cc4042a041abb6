import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { matrixVector, sampleCovariance } from '../../../src/risk/math/covariance.ts';
import { ledoitWolfConstantCorrelation, shrunkTimes } from '../../../src/risk/math/shrinkage.ts';
import { MONTHLY_STOCKS, WIDE_BOOK } from './data/ledoitWolfReference.ts';
import { maxRelativeError } from './fixtures.ts';

// The reference values come from test/risk/math/reference/ledoit_wolf_reference.py: the
// published formulas in matrix form (after the authors' covCor.m), run with numpy 1.24.2 and
// scikit-learn 1.2.1 (Debian's python3-sklearn); numpy 2.4.6 gives the same figures to 1e-15.
// No npm or Debian package implements the constant-correlation target itself, so the
// general-purpose library checks the one term it shares: scikit-learn's ledoit_wolf_shrinkage
// (scaled-identity target) is pi-hat / (T ||S - mu I||^2), so its pi-hat is read back from it.

describe.each([
  ['monthly returns of four stocks, 2000-2010 (vega-datasets stocks.csv), nearly constant correlations', MONTHLY_STOCKS],
  ['a wide book of 30 securities over 20 dates (invented)', WIDE_BOOK],
])('ledoitWolfConstantCorrelation on %s', (_name, reference) => {
  const x = Float64Array.from(reference.x);
  const result = ledoitWolfConstantCorrelation(x, reference.rows, reference.cols);

  it('matches the independent numpy computation of the paper\'s pi-hat, rho-hat, gamma-hat, rbar and intensity', () => {
    expect(result.averageCorrelation).toBeCloseTo(reference.averageCorrelation, 13);
    expect(result.piHat / reference.piHat).toBeCloseTo(1, 12);
    expect(result.rhoHat / reference.rhoHat).toBeCloseTo(1, 12);
    expect(result.gammaHat / reference.gammaHat).toBeCloseTo(1, 12);
    expect(result.intensity).toBeCloseTo(reference.intensity, 12);
  });

  it('matches the pi-hat read back from scikit-learn 1.2.1', () => {
    expect(result.piHat / reference.sklearnPiHat).toBeCloseTo(1, 12);
  });

  it('matches the shrunk matrix of the numpy computation once rescaled from divisor T to T - 1', () => {
    const paperConvention = result.covariance.map((v) => (v * (reference.rows - 1)) / reference.rows);
    expect(maxRelativeError(paperConvention, reference.shrunk, 1e-12)).toBeLessThan(1e-12);
  });

  it('does not mutate its input', () => {
    expect(Array.from(x)).toEqual(reference.x);
  });

  it('gives, through shrunkTimes, the numpy shrunk matrix (rescaled to divisor T - 1) times a book without forming it', () => {
    const { rows, cols } = reference;
    const w = Float64Array.from({ length: cols }, (_, i) => (i % 3 === 1 ? -0.2 : 1 / cols + i / 100));
    const paperS = sampleCovariance(x, rows, cols).map((v) => (v * (rows - 1)) / rows);
    const product = shrunkTimes(paperS, cols, rows, result, w, new Float64Array(cols));
    const expected = matrixVector(Float64Array.from(reference.shrunk, (v) => (v * rows) / (rows - 1)), cols, w);
    expect(maxRelativeError(product, expected, 1e-12)).toBeLessThan(1e-12);
  });
});

describe('ledoitWolfConstantCorrelation', () => {
  it('shrinks the wide book part of the way and so turns a singular S into a positive definite matrix', () => {
    const { rows, cols } = WIDE_BOOK;
    const x = Float64Array.from(WIDE_BOOK.x);
    const result = ledoitWolfConstantCorrelation(x, rows, cols);
    expect(result.intensity).toBeGreaterThan(0);
    expect(result.intensity).toBeLessThan(1);
    // smallest over largest eigenvalue: 0 (to rounding) for S of rank 19, clearly positive once shrunk
    const conditioning = (s: Float64Array): number => {
      const values = new EigenvalueDecomposition(new Matrix(Array.from({ length: cols }, (_, i) => Array.from(s.subarray(i * cols, (i + 1) * cols))))).realEigenvalues;
      return Math.min(...values) / Math.max(...values);
    };
    expect(Math.abs(conditioning(sampleCovariance(x, rows, cols)))).toBeLessThan(1e-12);
    expect(conditioning(result.covariance)).toBeGreaterThan(0.01);
  });

  it('keeps the sample variances on the diagonal (the target shares them) with the sample estimator\'s divisor T - 1', () => {
    const { rows, cols } = WIDE_BOOK;
    const x = Float64Array.from(WIDE_BOOK.x);
    const shrunk = ledoitWolfConstantCorrelation(x, rows, cols).covariance;
    const sample = sampleCovariance(x, rows, cols);
    for (let i = 0; i < cols; i++) expect(shrunk[i * cols + i] / sample[i * cols + i]).toBeCloseTo(1, 12);
  });

  it('gives intensity 0 and the sample covariance for two securities, whose correlation is always constant', () => {
    const x = Float64Array.of(0.01, 0.02, -0.01, 0.005, 0.003, -0.004, 0.02, 0.01);
    const result = ledoitWolfConstantCorrelation(x, 4, 2);
    expect(result.intensity).toBe(0);
    expect(maxRelativeError(result.covariance, sampleCovariance(x, 4, 2), 1e-12)).toBeLessThan(1e-12);
  });

  it('throws for a constant column, a missing return, one date or one security', () => {
    expect(() => ledoitWolfConstantCorrelation(Float64Array.of(0.01, 0, -0.02, 0, 0.01, 0), 3, 2)).toThrow(
      /ledoitWolfConstantCorrelation: column 1 has zero variance/,
    );
    expect(() => ledoitWolfConstantCorrelation(Float64Array.of(0.01, Number.NaN, -0.02, 0.01), 2, 2)).toThrow(/x\[0, 1\] must be finite, got NaN/);
    expect(() => ledoitWolfConstantCorrelation(Float64Array.of(0.01, 0.02), 1, 2)).toThrow(/rows must be an integer >= 2/);
    expect(() => ledoitWolfConstantCorrelation(Float64Array.of(0.01, 0.02), 2, 1)).toThrow(/cols must be an integer >= 2/);
  });
});
