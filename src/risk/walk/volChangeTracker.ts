import { volatilityChangeFromProducts } from '../math/volChange.ts';
import type { CovarianceView, Exposure } from './portfolioRow.ts';

/**
 * Why vol_ex_ante moved from one valuation date to the next, for an estimate that walks
 * the dates once. The split needs S w for both books under both dates' covariances;
 * the walk only holds today's estimate, so on date d-1 the products of yesterday's
 * covariance with both books (d-1's and d's weights, known in advance from the
 * panel) are kept per portfolio, and on date d they meet today's products.
 *
 * Both books are taken over the same securities: the non-cash holdings of either date
 * that have the estimate's history on both dates (a security held on one date only
 * weighs 0 on the other). When that is every non-cash holding, vol_prev and vol_now
 * are the two risk_daily figures; otherwise the row says `partial_history` and its
 * figures are those of the part covered on both dates. A security of the pair that
 * loses its history on d (a missing return) leaves no split: `history_broken`.
 */

export type VolChangeStatus = 'ok' | 'partial_history' | 'history_broken';

export interface VolChangeRow {
  status: VolChangeStatus;
  volPrev: number;
  volNow: number;
  fromWeights: number;
  fromMarket: number;
  /** The securities of the split, their weights on both dates and each one's weights part. */
  securities: Int32Array;
  weightPrev: Float64Array;
  weightNow: Float64Array;
  fromWeightsBySecurity: Float64Array;
}

interface Carried {
  row: number;
  /** Every non-cash holding of both dates is among `idx`. */
  complete: boolean;
  idx: Int32Array;
  w0: Float64Array;
  w1: Float64Array;
  sw0: Float64Array;
  sw1: Float64Array;
}

const EMPTY = new Float64Array(0);

/** S w of today's book over some securities, as the risk row already computed it (reused when the securities match). */
export interface KnownProduct {
  idx: Int32Array;
  sw: Float64Array;
}

export class VolChangeTracker {
  private readonly carried: (Carried | null)[];

  constructor(
    portfolios: number,
    private readonly periodsPerYear: number,
  ) {
    this.carried = new Array<Carried | null>(portfolios).fill(null);
  }

  /**
   * Under the estimate at row d (whose risk row has a volatility): keeps S_d w_d and
   * S_d w_d+1 for portfolio p, for the split on d + 1; `next` null forgets p.
   */
  carry(p: number, d: number, cov: CovarianceView, now: Exposure, next: Exposure | null, known: KnownProduct | null): void {
    const pair = next ? commonBooks(now, next, cov) : null;
    if (!pair) {
      this.carried[p] = null;
      return;
    }
    const sw0 = known && sameSecurities(known.idx, pair.idx) ? Float64Array.from(known.sw) : cov.product(pair.idx, pair.w0);
    this.carried[p] = { row: d, ...pair, sw0, sw1: cov.product(pair.idx, pair.w1) };
  }

  /** Forgets p: its risk row at the current date has no volatility. */
  forget(p: number): void {
    this.carried[p] = null;
  }

  /**
   * The split of the change from row d - 1 to d for portfolio p under the estimate at
   * row d (whose risk row has a volatility), or null when d - 1 was not carried.
   */
  split(p: number, d: number, cov: CovarianceView, known: KnownProduct | null): VolChangeRow | null {
    const c = this.carried[p];
    if (!c || c.row !== d - 1) return null;
    for (let a = 0; a < c.idx.length; a++) {
      if (!cov.covered(c.idx[a])) return brokenRow();
    }
    const sw1 = known && sameSecurities(known.idx, c.idx) ? known.sw : cov.product(c.idx, c.w1);
    const today = { sw0: cov.product(c.idx, c.w0), sw1 };
    const result = volatilityChangeFromProducts({ sw0: c.sw0, sw1: c.sw1 }, today, c.w0, c.w1, this.periodsPerYear);
    return {
      status: c.complete ? 'ok' : 'partial_history',
      volPrev: result.volPrev,
      volNow: result.volNow,
      fromWeights: result.fromWeights,
      fromMarket: result.fromMarket,
      securities: c.idx,
      weightPrev: c.w0,
      weightNow: c.w1,
      fromWeightsBySecurity: result.fromWeightsBySecurity,
    };
  }
}

function sameSecurities(a: Int32Array, b: Int32Array): boolean {
  if (a.length !== b.length) return false;
  for (let i = 0; i < a.length; i++) if (a[i] !== b[i]) return false;
  return true;
}

function brokenRow(): VolChangeRow {
  const nothing = Number.NaN;
  return {
    status: 'history_broken',
    volPrev: nothing,
    volNow: nothing,
    fromWeights: nothing,
    fromMarket: nothing,
    securities: new Int32Array(0),
    weightPrev: EMPTY,
    weightNow: EMPTY,
    fromWeightsBySecurity: EMPTY,
  };
}

/**
 * The non-cash holdings of either book (both sorted by security) that the estimate
 * covers, with each book's weight (0 where not held); null if a weight is not finite.
 */
function commonBooks(a: Exposure, b: Exposure, cov: CovarianceView) {
  const most = a.j.length + b.j.length;
  const idx = new Int32Array(most);
  const w0 = new Float64Array(most);
  const w1 = new Float64Array(most);
  let k = 0;
  let complete = true;
  let i = 0;
  let m = 0;
  while (i < a.j.length || m < b.j.length) {
    const ja = i < a.j.length ? a.j[i] : Number.MAX_SAFE_INTEGER;
    const jb = m < b.j.length ? b.j[m] : Number.MAX_SAFE_INTEGER;
    const j = Math.min(ja, jb);
    const x = ja === j ? a.w[i++] : 0;
    const y = jb === j ? b.w[m++] : 0;
    if (!Number.isFinite(x) || !Number.isFinite(y)) return null;
    if (a.isCash[j] === 1) continue;
    if (!cov.covered(j)) {
      complete &&= x === 0 && y === 0;
      continue;
    }
    idx[k] = j;
    w0[k] = x;
    w1[k++] = y;
  }
  return { complete, idx: idx.slice(0, k), w0: w0.slice(0, k), w1: w1.slice(0, k) };
}
