import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import * as ss from 'simple-statistics';
import { describe, expect, it } from 'vitest';
import { createRandom } from '../../../src/demo/random.ts';
import { EwmaEstimate } from '../../../src/risk/estimators/ewma.ts';
import type { ReturnPanel } from '../../../src/risk/inputs/panels.ts';
import { cheaperPath, chooseSamplePath, SampleEstimate, SLIDING_REFRESH, slidingStartRow } from '../../../src/risk/estimators/sample.ts';
import { ShrunkEstimate, shrunkPathCosts } from '../../../src/risk/estimators/shrunk.ts';
import { matrixVector } from '../../../src/risk/math/covariance.ts';
import { ledoitWolfConstantCorrelation } from '../../../src/risk/math/shrinkage.ts';
import { randomReturnPanel } from '../../helpers/returnPanel.ts';

/** T x N returns with a few holes (NaN) and one late starter, laid out as inputs.ts does. */
function panel(t: number, n: number, seed = 7): ReturnPanel {
  return randomReturnPanel(createRandom(seed), t, n, {
    drift: 0.0004,
    loading: (j) => 0.5 + j / n,
    missing: (d, j) => d === 0 || (j === 1 && d >= 300 && d < 303) || (j === n - 1 && d < 350),
    securityId: (j) => `EQ-TEST-${j}`,
  });
}

const column = (p: ReturnPanel, j: number, from: number, to: number) => Array.from(p.returnsBySecurity.subarray(j * p.dates.length + from, j * p.dates.length + to + 1));

describe('SampleEstimate', () => {
  const p = panel(700, 6);
  const idx = Int32Array.from([0, 1, 2, 4]);
  const w = Float64Array.from([0.3, -0.1, 0.5, 0.2]);

  it('gives S w equal to the two-pass sample covariance of simple-statistics on both paths', () => {
    const W = 63;
    const window = new SampleEstimate(p, W, 'window', 100);
    const sliding = new SampleEstimate(p, W, 'sliding', 100);
    for (let d = sliding.startRow; d < 700; d++) {
      sliding.advance(d, d >= 100);
      if (d >= 100) window.advance(d, true);
      if (d < 100 || !idx.every((j) => window.covered(j))) continue;
      const expected = Array.from(idx, (i) => idx.reduce((sum, j, b) => sum + ss.sampleCovariance(column(p, i, d - W + 1, d), column(p, j, d - W + 1, d)) * w[b], 0));
      const a = window.product(idx, w);
      const b = sliding.product(idx, w);
      expected.forEach((e, k) => {
        expect(a[k]).toBeCloseTo(e, 15);
        expect(b[k]).toBeCloseTo(e, 15);
        expect(Math.abs(a[k] - b[k])).toBeLessThanOrEqual(1e-10 * Math.abs(e));
      });
    }
  });

  it('marks a security covered only with W returns in a row (the hole at 300..302 and the late starter)', () => {
    const e = new SampleEstimate(p, 21, 'window', 0);
    const coveredAt = (d: number, j: number) => {
      const est = new SampleEstimate(p, 21, 'window', d);
      est.advance(d, true);
      return est.covered(j);
    };
    expect(e.startRow).toBe(0);
    expect(coveredAt(299, 1)).toBe(true);
    expect(coveredAt(302 + 20, 1)).toBe(false);
    expect(coveredAt(302 + 21, 1)).toBe(true);
    expect(coveredAt(349 + 21, 5)).toBe(true);
    expect(coveredAt(349 + 20, 5)).toBe(false);
  });

  it('started at slidingStartRow, the sliding state matches a run from the first row bit for bit', () => {
    for (const W of [21, 252]) {
      const from = 611;
      const start = slidingStartRow(from, W);
      expect(start % SLIDING_REFRESH).toBe(0);
      expect(start).toBeLessThanOrEqual(from - W + 1);
      const full = new SampleEstimate(p, W, 'sliding', 0);
      const late = new SampleEstimate(p, W, 'sliding', from);
      expect(late.startRow).toBe(start);
      for (let d = 0; d < 700; d++) {
        full.advance(d, d >= from);
        if (d >= start) late.advance(d, d >= from);
        if (d >= from) expect(Array.from(late.product(idx.subarray(0, 1), w.subarray(0, 1)))).toEqual(Array.from(full.product(idx.subarray(0, 1), w.subarray(0, 1))));
      }
    }
  });

  it('picks the sliding path for long windows over many securities and the window path for short ones (cost model)', () => {
    const large = { securities: 1000, holdingsPerDate: 50 * 200, holdingsSquaredPerDate: 50 * 200 * 200, outputDates: 2610, warmupDates: 0 };
    expect(chooseSamplePath({ ...large, window: 21 })).toBe('window');
    expect(chooseSamplePath({ ...large, window: 252 })).toBe('sliding');
    // one new day: the sliding warm-up is not worth it
    expect(chooseSamplePath({ ...large, window: 252, outputDates: 1, warmupDates: 500 })).toBe('window');
  });
});

describe('ShrunkEstimate', () => {
  const p = panel(700, 6);
  const idx = Int32Array.from([0, 1, 2, 4]);
  const w = Float64Array.from([0.3, -0.1, 0.5, 0.2]);
  const W = 21;
  /** The shrunk matrix of the window's returns, made directly (ledoitWolfConstantCorrelation: checked against numpy and scikit-learn), times w. */
  const direct = (d: number) => {
    const x = new Float64Array(W * idx.length);
    idx.forEach((j, b) => column(p, j, d - W + 1, d).forEach((v, u) => (x[u * idx.length + b] = v)));
    return matrixVector(ledoitWolfConstantCorrelation(x, W, idx.length).covariance, idx.length, w);
  };

  it('gives on both paths the shrunk matrix made directly from the window, times w', () => {
    const window = new ShrunkEstimate(p, W, 'window', 100);
    const sliding = new ShrunkEstimate(p, W, 'sliding', 100);
    let compared = 0;
    for (let d = sliding.startRow; d < 700; d++) {
      sliding.advance(d, d >= 100);
      if (d >= 100) window.advance(d, true);
      if (d < 100 || !idx.every((j) => window.covered(j))) continue;
      const expected = direct(d);
      const a = window.product(idx, w);
      expect(window.takeIntensity()).toBeGreaterThanOrEqual(0);
      const b = sliding.product(idx, w);
      expected.forEach((e, k) => {
        expect(Math.abs(a[k] - e)).toBeLessThanOrEqual(1e-12 * Math.abs(e));
        expect(Math.abs(b[k] - e)).toBeLessThanOrEqual(1e-10 * Math.abs(e));
      });
      compared++;
    }
    expect(compared).toBeGreaterThan(500);
  });

  it('started late on the sliding path, matches a run from the first row bit for bit', () => {
    const from = 611;
    const full = new ShrunkEstimate(p, W, 'sliding', 0);
    const late = new ShrunkEstimate(p, W, 'sliding', from);
    for (let d = 0; d < 700; d++) {
      full.advance(d, d >= from);
      if (d >= late.startRow) late.advance(d, d >= from);
      if (d >= from) expect(Array.from(late.product(idx, w))).toEqual(Array.from(full.product(idx, w)));
    }
  });

  it('leaves out a holding whose returns do not move over the window, on both paths alike (its row 0, the rest shrunk without it)', () => {
    // security 2 accrues at a fixed rate on rows 400..480 (a money-market fund's daily
    // accrual), after moving before: the two-pass formula and the sliding state both leave
    // a rounding-level variance for it, where the shrinkage must see none
    const flat = panel(700, 6);
    const t = flat.dates.length;
    const n = flat.securityIds.length;
    for (let d = 400; d <= 480; d++) {
      flat.returns[d * n + 2] = 0.00013;
      flat.returnsBySecurity[2 * t + d] = 0.00013;
    }
    const others = Int32Array.from([0, 1, 4]);
    const window = new ShrunkEstimate(flat, W, 'window', 430);
    const sliding = new ShrunkEstimate(flat, W, 'sliding', 430);
    for (let d = sliding.startRow; d <= 480; d++) {
      sliding.advance(d, d >= 430);
      if (d >= 430) window.advance(d, true);
      if (d < 430) continue;
      const x = new Float64Array(W * others.length);
      others.forEach((j, b) => column(flat, j, d - W + 1, d).forEach((v, u) => (x[u * others.length + b] = v)));
      const expected = matrixVector(ledoitWolfConstantCorrelation(x, W, others.length).covariance, others.length, Float64Array.from([w[0], w[1], w[3]]));
      for (const estimate of [window, sliding]) {
        const product = estimate.product(idx, w);
        expect(product[2]).toBe(0);
        [0, 1, 3].forEach((a, b) => expect(Math.abs(product[a] - expected[b])).toBeLessThanOrEqual(1e-10 * Math.abs(expected[b])));
      }
    }
  });

  it('reads S from a sliding state for a backfill and from the window for one new day (cost model)', () => {
    const large = { securities: 1000, holdingsPerDate: 50 * 200, holdingsSquaredPerDate: 50 * 200 * 200, window: 63 };
    expect(cheaperPath(shrunkPathCosts({ ...large, outputDates: 2610, warmupDates: 0 }))).toBe('sliding');
    expect(cheaperPath(shrunkPathCosts({ ...large, outputDates: 1, warmupDates: 300 }))).toBe('window');
  });
});

describe('EwmaEstimate', () => {
  const p = panel(420, 6);

  it('continues from its snapshot exactly as an uninterrupted run', () => {
    const full = new EwmaEstimate(p, 0.94, 15, null);
    let resumed: EwmaEstimate | null = null;
    for (let d = 0; d < 420; d++) {
      full.advance(d);
      if (d === 333) resumed = new EwmaEstimate(p, 0.94, 15, full.snapshot());
      else if (resumed) resumed.advance(d);
    }
    expect(resumed!.snapshot()).toEqual(full.snapshot());
  });

  it('keeps the matrix positive semi-definite when a security is seeded into it (ml-matrix eigenvalues)', () => {
    const e = new EwmaEstimate(p, 0.94, 15, null);
    for (let d = 0; d < 420; d++) {
      e.advance(d);
      if (d !== 303 + 14 && d !== 349 + 15) continue; // the dates security 1 re-enters and security 5 enters
      const { matrix, securityIds } = e.snapshot();
      expect(securityIds.length).toBe(d === 317 ? 5 : 6);
      const k = securityIds.length;
      const eig = new EigenvalueDecomposition(new Matrix(Array.from({ length: k }, (_, i) => Array.from(matrix.subarray(i * k, (i + 1) * k)))));
      const largest = Math.max(...eig.realEigenvalues);
      expect(Math.min(...eig.realEigenvalues)).toBeGreaterThan(-1e-12 * largest);
    }
  });

  it('drops a security on a missing return and seeds it again after seedDays returns in a row', () => {
    const e = new EwmaEstimate(p, 0.94, 15, null);
    const membersAt: Record<number, boolean> = {};
    for (let d = 0; d < 420; d++) {
      e.advance(d);
      membersAt[d] = e.covered(1);
    }
    expect(membersAt[299]).toBe(true);
    expect(membersAt[300]).toBe(false);
    expect(membersAt[303 + 13]).toBe(false);
    expect(membersAt[303 + 14]).toBe(true);
  });
});
