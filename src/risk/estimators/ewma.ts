import { annualizedVolatility } from '../math/annualize.ts';
import { upperSubMatrixVector } from '../math/covariance.ts';
import { ewmaUpperUpdateInPlace } from '../math/ewma.ts';
import { hasFullHistory } from '../inputs/fullHistory.ts';
import type { ReturnPanel } from '../inputs/panels.ts';
import { rowsCost } from '../runtime/costModel.ts';
import { ewmaStateStore } from '../store/ewmaState.ts';
import type { DateEstimate, EstimatorPlugin } from './estimator.ts';

/**
 * The `ewma` estimate S_t = lambda S_t-1 + (1 - lambda) r_t r_t' (zero mean) over the
 * securities that are "in" the matrix, advanced one date at a time.
 *
 * Entry (seeding): a security enters on the date its run of consecutive returns
 * reaches seedDays. Its row and column are then set from those seedDays dates u with
 * the EWMA's own weights c_u = (1 - lambda) lambda^(t - u):
 *   S_jk = a_j a_k sum_u c_u r_j,u r_k,u,  a = 1 / sqrt(1 - lambda^seedDays) for a
 *   newcomer, 1 for a security already in,
 * so a newcomer's variance is a weighted mean (the c_u sum to 1 - lambda^seedDays) and
 * the matrix stays positive semi-definite: it remains a weighted sum of outer products
 * r r' (a newcomer's earlier returns read as 0), rescaled by a positive diagonal. On
 * the first dates this is simply the normalised EWMA of the first seedDays returns.
 * The update of the entry date is the seed itself; from the next date on the
 * recursion applies.
 * Exit: a missing return takes the security out; it re-enters, freshly seeded, once it
 * has seedDays consecutive returns again.
 * Only the upper triangle of S is kept (S_jk with j <= k): the update then runs along
 * rows, and the products read it with upperSubMatrixVector.
 */

export interface EwmaState {
  /** Date row the state is at (after its update). */
  row: number;
  /** Securities in the matrix and their co-moments, row-major k x k. */
  securityIds: string[];
  matrix: Float64Array;
}

export class EwmaEstimate implements DateEstimate<EwmaState> {
  readonly windowDays = 0;
  readonly startRow: number;
  private readonly n: number;
  private readonly t: number;
  private readonly s: Float64Array;
  private readonly active: Uint8Array;
  /** The active securities, ascending, rebuilt each date. */
  private readonly live: Int32Array;
  private readonly seedWeights: Float64Array;
  private readonly newcomerScale: number;
  private row: number;
  /** The state at the date before the last (kept for `finish`). */
  private beforeLast: EwmaState | null;

  constructor(
    private readonly panel: ReturnPanel,
    private readonly lambda: number,
    private readonly seedDays: number,
    state: EwmaState | null,
  ) {
    this.n = panel.securityIds.length;
    this.t = panel.dates.length;
    this.s = new Float64Array(this.n * this.n);
    this.active = new Uint8Array(this.n);
    this.live = new Int32Array(this.n);
    // c_u for u = t - seedDays + 1 .. t, oldest first
    this.seedWeights = Float64Array.from({ length: seedDays }, (_, k) => (1 - lambda) * lambda ** (seedDays - 1 - k));
    this.newcomerScale = 1 / Math.sqrt(1 - lambda ** seedDays);
    // a state that misses a security in the matrix at its date (one the run that stored
    // it did not read) cannot be continued: replay from the first date
    const usable = state !== null && ewmaStateCovers(panel, state, seedDays) ? state : null;
    // computeRun reads every date when a state will not be continued; a replay over fewer would be wrong
    if (usable === null && (panel.returnsFrom ?? 0) > 0) throw new Error(`EwmaEstimate: a replay needs every date's returns, read from row ${panel.returnsFrom}`);
    this.row = usable ? usable.row : -1;
    this.startRow = this.row + 1;
    this.beforeLast = usable?.row === this.t - 2 ? usable : null;
    if (usable) this.restore(usable);
  }

  advance(d: number): void {
    if (d !== this.row + 1) throw new Error(`EwmaEstimate: advanced to row ${d} after ${this.row}`);
    this.row = d;
    const { n, active, live, panel } = this;
    const r = panel.returns.subarray(d * n, (d + 1) * n);
    let liveCount = 0;
    for (let j = 0; j < n; j++) {
      if (active[j] === 1 && !Number.isFinite(r[j])) active[j] = 0;
      if (active[j] === 1) live[liveCount++] = j;
    }
    ewmaUpperUpdateInPlace(this.s, n, r, this.lambda, live.subarray(0, liveCount));
    const newcomers: number[] = [];
    for (let j = 0; j < n; j++) {
      if (active[j] === 0 && hasFullHistory(panel, d, j, this.seedDays)) newcomers.push(j);
    }
    if (newcomers.length > 0) this.seed(d, newcomers);
    if (d === this.t - 2) this.beforeLast = this.snapshot();
  }

  /**
   * The states at the last two dates, oldest first: a run that redoes the last date
   * (a same-day correction) continues from the one before.
   */
  finish(): EwmaState[] {
    return this.beforeLast ? [this.beforeLast, this.snapshot()] : [this.snapshot()];
  }

  covered(j: number): boolean {
    return this.active[j] === 1;
  }

  variance(j: number): number {
    return this.s[j * this.n + j];
  }

  product(idx: Int32Array, w: Float64Array, out = new Float64Array(idx.length)): Float64Array {
    return upperSubMatrixVector(this.s, this.n, idx, w, out);
  }

  /** security_stats of the current date: every security in the matrix (no return for ewma). */
  forEachSecurity(emit: (j: number, annReturn: number, annVol: number) => void, periodsPerYear: number): void {
    for (let j = 0; j < this.n; j++) {
      if (this.active[j] === 1) emit(j, Number.NaN, annualizedVolatility(this.variance(j), periodsPerYear));
    }
  }

  /** The state at the current date, compact (only the securities in the matrix). */
  snapshot(): EwmaState {
    const members: number[] = [];
    for (let j = 0; j < this.n; j++) if (this.active[j] === 1) members.push(j);
    const k = members.length;
    const matrix = new Float64Array(k * k);
    // members ascending: entry (a, b) with a <= b is on the upper triangle, the rest its mirror
    members.forEach((i, a) => members.forEach((j, b) => (matrix[a * k + b] = a <= b ? this.s[i * this.n + j] : this.s[j * this.n + i])));
    return { row: this.row, securityIds: members.map((j) => this.panel.securityIds[j]), matrix };
  }

  /** The stored co-moments of this run's securities; a stored security the run did not read is left out (S_jk involves j and k alone). */
  private restore(state: EwmaState): void {
    const position = new Map(this.panel.securityIds.map((id, j) => [id, j]));
    const members = state.securityIds.map((id) => position.get(id) ?? -1);
    const k = members.length;
    if (state.matrix.length !== k * k) throw new Error(`EWMA state: a matrix of ${state.matrix.length} values for ${k} securities`);
    members.forEach((i, a) => {
      if (i < 0) return;
      this.active[i] = 1;
      members.forEach((j, b) => {
        if (j >= 0 && i <= j) this.s[i * this.n + j] = state.matrix[a * k + b];
      });
    });
  }

  private seed(d: number, newcomers: number[]): void {
    const { n, t, s, active, seedDays, seedWeights, newcomerScale } = this;
    const series = this.panel.returnsBySecurity;
    const first = d - seedDays + 1;
    const isNew = new Uint8Array(n);
    for (const j of newcomers) isNew[j] = 1;
    for (const j of newcomers) active[j] = 1;
    const weighted = new Float64Array(seedDays);
    for (const j of newcomers) {
      for (let u = 0; u < seedDays; u++) weighted[u] = seedWeights[u] * series[j * t + first + u];
      for (let k = 0; k < n; k++) {
        if (active[k] === 0 || (isNew[k] === 1 && k < j)) continue;
        let sum = 0;
        for (let u = 0; u < seedDays; u++) sum += weighted[u] * series[k * t + first + u];
        s[j <= k ? j * n + k : k * n + j] = sum * newcomerScale * (isNew[k] === 1 ? newcomerScale : 1);
      }
    }
  }
}

/**
 * Whether the state holds every security of this run that is in the matrix at its date:
 * by the entry and exit rules, exactly those with seedDays consecutive returns up to
 * that date.
 */
export function ewmaStateCovers(panel: ReturnPanel, state: EwmaState, seedDays: number): boolean {
  const stored = new Set(state.securityIds);
  const n = panel.securityIds.length;
  for (let j = 0; j < n; j++) {
    if (panel.runLength[state.row * n + j] >= seedDays && !stored.has(panel.securityIds[j])) return false;
  }
  return true;
}

/** The EWMA of risk.ewma (window_days 0), continued from its stored state when a run may. */
export const ewmaEstimator: EstimatorPlugin<{ lambda: number; seedDays: number }, EwmaState> = {
  name: 'ewma',
  realized: { volatility: false, trackingError: false },
  storedState: { ...ewmaStateStore, fits: (state, returns, config) => ewmaStateCovers(returns, state, config.risk.ewma.seedDays) },
  windows: (config) => (config.risk.ewma.enabled ? [0] : []),
  plan(_windowDays, config, load, state) {
    const { lambda, seedDays } = config.risk.ewma;
    // without a stored state the EWMA replays from the first date
    const walked = state ? load.dateCount - state.row - 1 : load.dateCount;
    const n = load.securitiesWithReturns;
    return { params: { lambda, seedDays }, cost: walked * n * n + load.outputDates * load.squaredPerDate + rowsCost(load) };
  },
  open: ({ lambda, seedDays }, _windowDays, input, state) => new EwmaEstimate(input.returns, lambda, seedDays, state),
};
