import { requireIndices, requireInteger, requireLength } from './checks.ts';
import { upperSubMatrixVector } from './covariance.ts';

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
  /** One column's centred values over the rows held. */
  private readonly column: Float64Array;

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
    this.column = new Float64Array(window);
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
   * S[idx, idx] v from the current co-moments, written into `out` when given. Every
   * listed column must be free of missing values (callers check `complete` first) and
   * at least 2 rows held; ascending indices take the fast path.
   */
  subMatrixVector(idx: Int32Array, v: Float64Array, out = new Float64Array(idx.length)): Float64Array {
    const fn = 'SlidingCovariance.subMatrixVector';
    this.requireCleanColumns(fn, idx);
    requireLength(fn, 'v', v.length, idx.length);
    upperSubMatrixVector(this.comoments, this.n, idx, v, out);
    const divisor = this.held - 1;
    for (let a = 0; a < idx.length; a++) out[a] /= divisor;
    return out;
  }

  /**
   * The co-moments of idx over `divisor` (count - 1 gives the sample covariance
   * S[idx, idx]; count, the divisor of a paper that uses it), in full (row-major, k x k
   * for k listed columns) into `out`, in O(k^2). The listed columns must be free of
   * missing values, as for `subMatrixVector`.
   */
  subMatrix(idx: Int32Array, divisor: number, out = new Float64Array(idx.length * idx.length)): Float64Array {
    const fn = 'SlidingCovariance.subMatrix';
    this.requireCleanColumns(fn, idx);
    const k = idx.length;
    requireLength(fn, 'out', out.length, k * k);
    const { n, comoments } = this;
    for (let a = 0; a < k; a++) {
      for (let b = a; b < k; b++) {
        const i = idx[a];
        const j = idx[b];
        out[a * k + b] = (i <= j ? comoments[i * n + j] : comoments[j * n + i]) / divisor;
        out[b * k + a] = out[a * k + b];
      }
    }
    return out;
  }

  /** Valid indices, at least 2 rows held, and no listed column with a missing value in the window. */
  private requireCleanColumns(fn: string, idx: Int32Array): void {
    requireIndices(fn, 'idx', idx, this.n);
    if (this.held < 2) throw new Error(`${fn}: needs at least 2 rows, holds ${this.held}`);
    for (let a = 0; a < idx.length; a++) {
      if (this.clean[idx[a]] !== 1) throw new Error(`${fn}: column ${idx[a]} has a missing value in the window`);
    }
  }

  /**
   * Recomputes means and co-moments of the clean columns exactly (two-pass) from the rows
   * held. The centred rows are added four at a time (a rank-4 update), so the co-moment
   * matrix is read and written a quarter as often; the result depends only on the rows
   * held, in order, as the incremental runs rely on.
   */
  refresh(): void {
    const liveCount = this.collectClean();
    const { n, means, comoments, live } = this;
    const d = [this.before, this.after, this.leavingBefore, this.leavingAfter];
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
    for (let r = 0; r < this.held; r += 4) {
      // rows past the end of a short last group are centred to zeros: they add nothing
      for (let g = 0; g < 4; g++) {
        const target = d[g];
        if (r + g < this.held) {
          const base = this.slot(r + g) * n;
          for (let a = 0; a < liveCount; a++) target[a] = this.rows[base + live[a]] - means[live[a]];
        } else {
          target.fill(0, 0, liveCount);
        }
      }
      const [d0, d1, d2, d3] = d;
      for (let a = 0; a < liveCount; a++) {
        const rowI = live[a] * n;
        const a0 = d0[a];
        const a1 = d1[a];
        const a2 = d2[a];
        const a3 = d3[a];
        for (let b = a; b < liveCount; b++) comoments[rowI + live[b]] += a0 * d0[b] + a1 * d1[b] + (a2 * d2[b] + a3 * d3[b]);
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

  /**
   * Columns whose last missing value just left the window: exact two-pass rebuild against
   * every clean column. For each such column its centred values are formed once, then
   * added into all clean columns' sums row by row (contiguous reads of the rows held).
   */
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
    const { live, column } = this;
    const sums = this.after;
    for (let f = 0; f < liveCount; f++) {
      const i = live[f];
      if (fresh[i] === 0) continue;
      for (let r = 0; r < this.held; r++) column[r] = this.rows[this.slot(r) * n + i] - means[i];
      sums.fill(0, 0, liveCount);
      for (let r = 0; r < this.held; r++) {
        const base = this.slot(r) * n;
        const di = column[r];
        for (let b = 0; b < liveCount; b++) sums[b] += di * (this.rows[base + live[b]] - means[live[b]]);
      }
      for (let b = 0; b < liveCount; b++) {
        const j = live[b];
        comoments[i <= j ? i * n + j : j * n + i] = sums[b];
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
