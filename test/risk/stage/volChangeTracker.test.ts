import { describe, expect, it } from 'vitest';
import { volatilityChange } from '../../../src/risk/math/volChange.ts';
import type { CovarianceView, Exposure } from '../../../src/risk/walk/portfolioRow.ts';
import { VolChangeTracker } from '../../../src/risk/walk/volChangeTracker.ts';

/**
 * The tracker's bookkeeping between two dates, on hand-made covariances over four
 * securities (index 3 is base-currency cash): which securities a split covers, its
 * status, and that it equals the matrix form of the split (checked against a hand
 * example in test/risk/math/volChange.test.ts) on the covered part.
 */

const N = 4;
const isCash = Uint8Array.of(0, 0, 0, 1);

/** A covariance view over a full N x N matrix (daily), with the securities it covers. */
function view(s: number[], covered: number[]): CovarianceView & { products: number } {
  const matrix = Float64Array.from(s);
  return {
    products: 0,
    covered: (j) => covered.includes(j),
    variance: (j) => matrix[j * N + j],
    product(idx, w, out = new Float64Array(idx.length)) {
      this.products++;
      idx.forEach((i, a) => (out[a] = idx.reduce((sum, k, b) => sum + matrix[i * N + k] * w[b], 0)));
      return out;
    },
  };
}

const book = (j: number[], w: number[]): Exposure => ({ j: Int32Array.from(j), w: Float64Array.from(w), isCash });

// yesterday and today: correlated first two securities, the third calmer; today the market is rougher
const S0 = [4e-4, 1e-4, 0, 0, 1e-4, 2.5e-4, 0, 0, 0, 0, 1e-4, 0, 0, 0, 0, 0];
const S1 = [9e-4, 2e-4, 0, 0, 2e-4, 3e-4, 0, 0, 0, 0, 1e-4, 0, 0, 0, 0, 0];
const sub = (s: number[], idx: number[]) => Float64Array.from(idx.flatMap((i) => idx.map((k) => s[i * N + k])));

describe('VolChangeTracker', () => {
  const yesterday = book([0, 1, 3], [0.5, 0.3, 0.2]);
  const today = book([0, 2, 3], [0.45, 0.35, 0.2]);

  it('splits over the holdings of both dates like the matrix form, status ok when all are covered', () => {
    const tracker = new VolChangeTracker(1, 252);
    tracker.carry(0, 6, view(S0, [0, 1, 2]), yesterday, today, null);
    const row = tracker.split(0, 7, view(S1, [0, 1, 2]), null)!;
    const expected = volatilityChange(sub(S0, [0, 1, 2]), sub(S1, [0, 1, 2]), 3, Float64Array.of(0.5, 0.3, 0), Float64Array.of(0.45, 0, 0.35), 252);
    expect(row.status).toBe('ok');
    expect(Array.from(row.securities)).toEqual([0, 1, 2]);
    expect(row.volPrev).toBeCloseTo(expected.volPrev, 15);
    expect(row.volNow).toBeCloseTo(expected.volNow, 15);
    expect(row.fromWeights).toBeCloseTo(expected.fromWeights, 15);
    expect(row.fromMarket).toBeCloseTo(expected.fromMarket, 15);
    Array.from(row.fromWeightsBySecurity).forEach((v, i) => expect(v).toBeCloseTo(expected.fromWeightsBySecurity[i], 15));
  });

  it('leaves out a holding without history on the first date and says partial_history', () => {
    const tracker = new VolChangeTracker(1, 252);
    tracker.carry(0, 6, view(S0, [0, 1]), yesterday, today, null);
    const row = tracker.split(0, 7, view(S1, [0, 1, 2]), null)!;
    expect(row.status).toBe('partial_history');
    expect(Array.from(row.securities)).toEqual([0, 1]);
  });

  it('gives no figures when a security of the pair lost its history on the second date (history_broken)', () => {
    const tracker = new VolChangeTracker(1, 252);
    tracker.carry(0, 6, view(S0, [0, 1, 2]), yesterday, today, null);
    const row = tracker.split(0, 7, view(S1, [0, 2]), null)!;
    expect(row.status).toBe('history_broken');
    expect([row.volPrev, row.fromWeights, row.fromMarket].every(Number.isNaN)).toBe(true);
  });

  it('splits only consecutive dates: nothing carried, forgotten, or carried from another date', () => {
    const tracker = new VolChangeTracker(2, 252);
    expect(tracker.split(0, 7, view(S1, [0, 1, 2]), null)).toBeNull();
    tracker.carry(0, 5, view(S0, [0, 1, 2]), yesterday, today, null);
    expect(tracker.split(0, 7, view(S1, [0, 1, 2]), null)).toBeNull();
    tracker.carry(1, 6, view(S0, [0, 1, 2]), yesterday, today, null);
    tracker.forget(1);
    expect(tracker.split(1, 7, view(S1, [0, 1, 2]), null)).toBeNull();
  });

  it("reuses the row's own S w when it covers the same securities, with the same figures", () => {
    const same = book([0, 1, 3], [0.48, 0.32, 0.2]);
    const plain = new VolChangeTracker(1, 252);
    const reusing = new VolChangeTracker(1, 252);
    const a = view(S0, [0, 1, 2]);
    const b = view(S0, [0, 1, 2]);
    plain.carry(0, 6, a, yesterday, same, null);
    const known = { idx: Int32Array.of(0, 1), sw: b.product(Int32Array.of(0, 1), Float64Array.of(0.5, 0.3)) };
    b.products = 0;
    reusing.carry(0, 6, b, yesterday, same, known);
    expect([a.products, b.products]).toEqual([2, 1]);
    const c = view(S1, [0, 1, 2]);
    expect(reusing.split(0, 7, c, null)).toEqual(plain.split(0, 7, view(S1, [0, 1, 2]), null));
  });
});
