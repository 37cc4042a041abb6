import { requireIndices, requireInteger, requireLength } from './checks.ts';

/**
 * Sample covariance of n series over the last `window` rows, updated one row at a time
 * in O(n^2) instead of O(window * n^2) per date.
 *
 * Means and co-moments C_ij = sum_t (x_ti - m_i)(x_tj - m_j) are kept centred, in the
 * manner of Welford (Technometrics 4(3), 1962) extended to co-moments:
 * - adding x to N - 1 rows: C'_ij = C_ij + (N - 1)/N d_i d_j with d = x - m;
 * - replacing the oldest row y by x with N fixed: m' = m + (x - y)/N and
 *   C'_ij = C_ij + (x_i - m_i)(x_j - m'_j) - (y_i - m_i)(y_j - m'_j)
 *   (expand sum x_i x_j - N m_i m_j before and after to check it).
 * Every `refreshEvery` pushes the state is recomputed exactly, two-pass, from the rows
 * held, so rounding cannot build up over years of daily updates.
 *
 * Missing values: a non-finite entry (NaN = missing) makes its column "dirty" while it
 * stays in the window. Dirty columns are left out of every update; when a column's
 * last missing value leaves the window its mean and co-moments are rebuilt exactly from
 * the rows held. So the numbers for columns without missing values are exactly those of
 * the two-pass formula on the window, and a dirty column reads as NaN.
 */
export class SlidingCovariance {
  readonly n: number;
  readonly window: number;
  readonly refreshEvery: number;
  private held = 0;
  private oldest = 0;
  private pushes = 0;
  private readonly rows: Float64Array;
  private readonly finiteCount: Int32Array;
  private readonly clean: Uint8Array;
  private readonly means: Float64Array;
  /** Upper triangle (i <= j) of the co-moment matrix; the lower one is never read. */
  private readonly comoments: Float64Array;
  private readonly live: Int32Array;
  private readonly fresh: Uint8Array;
  private readonly before: Float64Array;
  private readonly after: Float64Array;
  private readonly leavingBefore: Float64Array;
  private readonly leavingAfter: Float64Array;

  constructor(n: number, window: number, refreshEvery = 256) {
    requireInteger('SlidingCovariance', 'n', n, 1);
    requireInteger('SlidingCovariance', 'window', window, 2);
    requireInteger('SlidingCovariance', 'refreshEvery', refreshEvery, 1);
    this.n = n;
    this.window = window;
    this.refreshEvery = refreshEvery;
    this.rows = new Float64Array(window * n);
    this.finiteCount = new Int32Array(n);
    this.clean = new Uint8Array(n);
    this.means = new Float64Array(n);
    this.comoments = new Float64Array(n * n);
    this.live = new Int32Array(n);
    this.fresh = new Uint8Array(n);
    this.before = new Float64Array(n);
    this.after = new Float64Array(n);
    this.leavingBefore = new Float64Array(n);
    this.leavingAfter = new Float64Array(n);
  }

  /** Rows held: grows to `window`, then stays there. */
  get count(): number {
    return this.held;
  }

  /** Adds a row of n values (non-finite = missing); drops the oldest once `window` are held. */
  push(row: Float64Array): void {
    requireLength('SlidingCovariance.push', 'row', row.length, this.n);
    if (this.held < this.window) this.grow(row);
    else this.replaceOldest(row);
    this.pushes++;
    if (this.pushes % this.refreshEvery === 0) this.refresh();
  }

  /** True when column j has `window` non-missing values in the window. */
  complete(j: number): boolean {
    return this.held === this.window && this.clean[j] === 1;
  }

  /** Mean of column j over the rows held; NaN while it has a missing value in them. */
  mean(j: number): number {
    return this.clean[j] === 1 && this.held > 0 ? this.means[j] : Number.NaN;
  }

  /** Sample covariance (divisor count - 1); NaN unless both columns have no missing value. */
  covariance(i: number, j: number): number {
    if (this.clean[i] !== 1 || this.clean[j] !== 1 || this.held < 2) return Number.NaN;
    const c = i <= j ? this.comoments[i * this.n + j] : this.comoments[j * this.n + i];
    return c / (this.held - 1);
  }

  variance(j: number): number {
    return this.covariance(j, j);
  }

  /**
   * S[idx, idx] v from the current co-moments. Every listed column must be free of
   * missing values (callers check `complete` first) and at least 2 rows held.
   */
  subMatrixVector(idx: Int32Array, v: Float64Array): Float64Array {
    const fn = 'SlidingCovariance.subMatrixVector';
    requireIndices(fn, 'idx', idx, this.n);
    requireLength(fn, 'v', v.length, idx.length);
    if (this.held < 2) throw new Error(`${fn}: needs at least 2 rows, holds ${this.held}`);
    for (let a = 0; a < idx.length; a++) {
      if (this.clean[idx[a]] !== 1) throw new Error(`${fn}: column ${idx[a]} has a missing value in the window`);
    }
    const n = this.n;
    const c = this.comoments;
    const out = new Float64Array(idx.length);
    const divisor = this.held - 1;
    for (let a = 0; a < idx.length; a++) {
      const i = idx[a];
      let sum = 0;
      for (let b = 0; b < idx.length; b++) {
        const j = idx[b];
        sum += (i <= j ? c[i * n + j] : c[j * n + i]) * v[b];
      }
      out[a] = sum / divisor;
    }
    return out;
  }

  /** Recomputes means and co-moments of the clean columns exactly (two-pass) from the rows held. */
  refresh(): void {
    const liveCount = this.collectClean();
    const { n, means, comoments, live, before } = this;
    for (let a = 0; a < liveCount; a++) means[live[a]] = 0;
    for (let r = 0; r < this.held; r++) {
      const base = this.slot(r) * n;
      for (let a = 0; a < liveCount; a++) means[live[a]] += this.rows[base + live[a]];
    }
    for (let a = 0; a < liveCount; a++) {
      means[live[a]] /= this.held;
      const rowI = live[a] * n;
      for (let b = a; b < liveCount; b++) comoments[rowI + live[b]] = 0;
    }
    for (let r = 0; r < this.held; r++) {
      const base = this.slot(r) * n;
      for (let a = 0; a < liveCount; a++) before[a] = this.rows[base + live[a]] - means[live[a]];
      for (let a = 0; a < liveCount; a++) {
        const rowI = live[a] * n;
        const da = before[a];
        for (let b = a; b < liveCount; b++) comoments[rowI + live[b]] += da * before[b];
      }
    }
  }

  private grow(row: Float64Array): void {
    const { n, means, comoments, live, before } = this;
    const size = this.held + 1;
    this.rows.set(row, this.slot(this.held) * n);
    let liveCount = 0;
    for (let j = 0; j < n; j++) {
      const finite = Number.isFinite(row[j]);
      if (finite) this.finiteCount[j]++;
      if (this.clean[j] === 1 && finite) {
        before[liveCount] = row[j] - means[j];
        means[j] += before[liveCount] / size;
        live[liveCount++] = j;
      } else {
        this.clean[j] = 0;
      }
    }
    const shrink = (size - 1) / size;
    for (let a = 0; a < liveCount; a++) {
      const rowI = live[a] * n;
      const da = before[a] * shrink;
      for (let b = a; b < liveCount; b++) comoments[rowI + live[b]] += da * before[b];
    }
    this.held = size;
    this.rebuildNewlyClean();
  }

  private replaceOldest(row: Float64Array): void {
    const { n, means, comoments, live, before, after, leavingBefore, leavingAfter } = this;
    const base = this.oldest * n;
    let liveCount = 0;
    for (let j = 0; j < n; j++) {
      const leaving = this.rows[base + j];
      const finite = Number.isFinite(row[j]);
      this.finiteCount[j] += (finite ? 1 : 0) - (Number.isFinite(leaving) ? 1 : 0);
      if (this.clean[j] === 1 && finite) {
        const previous = means[j];
        const next = previous + (row[j] - leaving) / this.window;
        before[liveCount] = row[j] - previous;
        after[liveCount] = row[j] - next;
        leavingBefore[liveCount] = leaving - previous;
        leavingAfter[liveCount] = leaving - next;
        means[j] = next;
        live[liveCount++] = j;
      } else {
        this.clean[j] = 0;
      }
    }
    for (let a = 0; a < liveCount; a++) {
      const rowI = live[a] * n;
      const xa = before[a];
      const ya = leavingBefore[a];
      for (let b = a; b < liveCount; b++) comoments[rowI + live[b]] += xa * after[b] - ya * leavingAfter[b];
    }
    this.rows.set(row, base);
    this.oldest = (this.oldest + 1) % this.window;
    this.rebuildNewlyClean();
  }

  /** Columns whose last missing value just left the window: exact two-pass rebuild against every clean column. */
  private rebuildNewlyClean(): void {
    const { n, means, comoments, fresh } = this;
    let any = false;
    for (let j = 0; j < n; j++) {
      fresh[j] = 0;
      if (this.clean[j] === 0 && this.finiteCount[j] === this.held) {
        let sum = 0;
        for (let r = 0; r < this.held; r++) sum += this.rows[this.slot(r) * n + j];
        means[j] = sum / this.held;
        this.clean[j] = 1;
        fresh[j] = 1;
        any = true;
      }
    }
    if (!any) return;
    const liveCount = this.collectClean();
    const live = this.live;
    for (let a = 0; a < liveCount; a++) {
      const i = live[a];
      for (let b = a; b < liveCount; b++) {
        const j = live[b];
        if (fresh[i] === 0 && fresh[j] === 0) continue;
        let sum = 0;
        for (let r = 0; r < this.held; r++) {
          const base = this.slot(r) * n;
          sum += (this.rows[base + i] - means[i]) * (this.rows[base + j] - means[j]);
        }
        comoments[i * n + j] = sum;
      }
    }
  }

  /** Fills `live` with the clean columns in ascending order (so live[a] <= live[b] stays in the upper triangle). */
  private collectClean(): number {
    let count = 0;
    for (let j = 0; j < this.n; j++) if (this.clean[j] === 1) this.live[count++] = j;
    return count;
  }

  /** Buffer slot of the r-th oldest row held. */
  private slot(r: number): number {
    return (this.oldest + r) % this.window;
  }
}
