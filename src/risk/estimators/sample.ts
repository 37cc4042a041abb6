import type { Config } from '../../config/load.ts';
import { annualizedReturn, annualizedVolatility } from '../math/annualize.ts';
import { CentredCrossProducts, centredTimesWeights, centreSeriesInto } from '../math/covariance.ts';
import { mean, sampleVariance } from '../math/moments.ts';
import { SlidingCovariance } from '../math/slidingCovariance.ts';
import { hasFullHistory } from '../inputs/fullHistory.ts';
import type { ReturnPanel } from '../inputs/panels.ts';
import { rowsCost, type RunLoad } from '../runtime/costModel.ts';
import type { DateEstimate, EstimatorPlugin } from './estimator.ts';

/**
 * The rolling `sample` estimate over a window of W returns, advanced one date at a
 * time. Two ways to get S w, picked by cost (`chooseSamplePath`):
 * - 'window': S w = X'(X w) / (W - 1) on the window's return rows, per portfolio, in
 *   O(W n_p), never forming S (cheap for short windows); the window is centred once per
 *   date for all securities and shared by the portfolios;
 * - 'sliding': one SlidingCovariance over all securities, O(N^2) per date shared by all
 *   portfolios, then S[idx, idx] w per portfolio in O(n_p^2) (cheap for long windows).
 * Per-security means and variances come from the sliding state on the sliding path
 * (exact two-pass refresh every SLIDING_REFRESH dates, updates in between) and from
 * the two-pass formulas on the security's contiguous series on the window path; the
 * two agree to rounding (~1e-15 relative).
 */

export type SamplePath = 'window' | 'sliding';

/** Exact two-pass refresh of the sliding state every this many dates (counted from date row 0). */
export const SLIDING_REFRESH = 256;

export interface PathCostInputs {
  window: number;
  /** Securities with at least one return (the sliding matrix's live columns). */
  securities: number;
  /** Per output date, summed over portfolios: non-cash holdings n_p, and n_p^2. */
  holdingsPerDate: number;
  holdingsSquaredPerDate: number;
  outputDates: number;
  /** Dates the sliding state must be fed before the first output date. */
  warmupDates: number;
}

/**
 * Multiply-adds of each path over the run; the sliding one pays for its warm-up too. The
 * sliding update touches the upper triangle with two products per entry (N^2), each
 * portfolio's product reads its upper sub-triangle with two per entry (n_p^2); the
 * window path makes two passes over the portfolio's W x n_p returns.
 */
export function samplePathCosts(c: PathCostInputs): Record<SamplePath, number> {
  return {
    sliding: (c.outputDates + c.warmupDates) * c.securities * c.securities + c.outputDates * c.holdingsSquaredPerDate,
    window: c.outputDates * 2 * c.window * c.holdingsPerDate,
  };
}

/** A run's load as the path costs of a window read it. */
export function pathCostInputs(window: number, load: RunLoad): PathCostInputs {
  return {
    window,
    securities: load.securitiesWithReturns,
    holdingsPerDate: load.perDate,
    holdingsSquaredPerDate: load.squaredPerDate,
    outputDates: load.outputDates,
    warmupDates: load.fromRow - slidingStartRow(load.fromRow, window),
  };
}

/** The cheaper path by `samplePathCosts`. */
export function chooseSamplePath(c: PathCostInputs): SamplePath {
  return cheaperPath(samplePathCosts(c));
}

/** The path of the lower cost (the window path on a tie). */
export function cheaperPath(costs: Record<SamplePath, number>): SamplePath {
  return costs.sliding < costs.window ? 'sliding' : 'window';
}

/**
 * First date row the sliding state must be fed from so that, at `fromRow`, it has gone
 * through the same exact refresh as a run from row 0: refreshes happen after rows
 * r with (r + 1) % SLIDING_REFRESH == 0, and a refresh with a full window makes the
 * state a function of the window's rows alone. So incremental and full runs agree bit
 * for bit from there on.
 */
export function slidingStartRow(fromRow: number, window: number): number {
  const refreshRow = Math.floor((fromRow + 1) / SLIDING_REFRESH) * SLIDING_REFRESH - 1;
  const start = Math.floor((refreshRow - window + 1) / SLIDING_REFRESH) * SLIDING_REFRESH;
  return Math.max(0, start);
}

export class SampleEstimate implements DateEstimate {
  readonly startRow: number;
  private readonly n: number;
  private readonly t: number;
  private readonly sliding: SlidingCovariance | null;
  private readonly means: Float64Array;
  private readonly variances: Float64Array;
  /** The window path's centred window of the current date, security by security (N x W), its means and a scratch row. */
  private readonly centred: Float64Array | null;
  private readonly centredMeans: Float64Array;
  private readonly portfolioScratch: Float64Array;
  /** The window path's co-moments of the current date, each pair summed once (for the shrunk estimate). */
  private readonly crossProducts: CentredCrossProducts;
  private row = -1;

  constructor(
    private readonly panel: ReturnPanel,
    readonly windowDays: number,
    readonly path: SamplePath,
    fromRow: number,
  ) {
    this.n = panel.securityIds.length;
    this.t = panel.dates.length;
    this.sliding = path === 'sliding' && this.n > 0 ? new SlidingCovariance(this.n, windowDays, SLIDING_REFRESH) : null;
    this.startRow = this.sliding ? slidingStartRow(fromRow, windowDays) : fromRow;
    this.means = new Float64Array(this.n);
    this.variances = new Float64Array(this.n);
    this.centred = this.sliding ? null : new Float64Array(windowDays * this.n);
    this.centredMeans = new Float64Array(this.n);
    this.portfolioScratch = new Float64Array(windowDays);
    this.crossProducts = new CentredCrossProducts(this.n);
  }

  /** Feeds date row d (rows in increasing order from `startRow`); `output` also computes the per-security moments. */
  advance(d: number, output: boolean): void {
    if (d !== this.row + 1 && this.row !== -1) throw new Error(`SampleEstimate: advanced to row ${d} after ${this.row}`);
    this.row = d;
    const { n, t, panel, windowDays } = this;
    this.sliding?.push(panel.returns.subarray(d * n, (d + 1) * n));
    if (!output) return;
    const sliding = this.sliding;
    if (this.centred && d >= windowDays - 1) {
      centreSeriesInto(panel.returnsBySecurity, t, d - windowDays + 1, windowDays, this.centredMeans, this.centred);
      this.crossProducts.reset();
    }
    for (let j = 0; j < n; j++) {
      if (!hasFullHistory(panel, d, j, windowDays)) {
        this.means[j] = Number.NaN;
        this.variances[j] = Number.NaN;
      } else if (sliding) {
        // O(1) from the sliding state; a rounding-level negative variance reads as 0
        this.means[j] = sliding.mean(j);
        this.variances[j] = Math.max(0, sliding.variance(j));
      } else {
        const series = panel.returnsBySecurity.subarray(j * t + d - windowDays + 1, j * t + d + 1);
        this.means[j] = mean(series);
        this.variances[j] = sampleVariance(series);
      }
    }
  }

  /** The date row last advanced to. */
  get currentRow(): number {
    return this.row;
  }

  covered(j: number): boolean {
    return hasFullHistory(this.panel, this.row, j, this.windowDays);
  }

  variance(j: number): number {
    return this.variances[j];
  }

  product(idx: Int32Array, w: Float64Array, out = new Float64Array(idx.length)): Float64Array {
    if (this.sliding) return this.sliding.subMatrixVector(idx, w, out);
    return centredTimesWeights(this.centred!, this.windowDays, idx, w, out, this.portfolioScratch);
  }

  /** The window's co-moments of ids over `divisor` (W - 1: S[ids, ids]) in full, k x k, on an output date, from the path's own state; ids covered. */
  subMatrix(ids: Int32Array, divisor: number): Float64Array {
    const out = new Float64Array(ids.length * ids.length);
    if (this.sliding) return this.sliding.subMatrix(ids, divisor, out);
    return this.crossProducts.subMatrix(this.centred!, this.windowDays, ids, divisor, out);
  }

  /** security_stats of the current date: every security with a full window. */
  forEachSecurity(emit: (j: number, annReturn: number, annVol: number) => void, periodsPerYear: number): void {
    for (let j = 0; j < this.n; j++) {
      if (!Number.isNaN(this.variances[j])) {
        emit(j, annualizedReturn(this.means[j], periodsPerYear), annualizedVolatility(this.variances[j], periodsPerYear));
      }
    }
  }
}

/** The rolling sample estimate of every window in risk.windows; the path of each is chosen by cost. */
export const sampleEstimator: EstimatorPlugin<{ path: SamplePath }> = {
  name: 'sample',
  realized: { volatility: true, trackingError: true },
  windows: (config: Config) => uniqueSorted(config.risk.windows),
  plan(windowDays, _config, load: RunLoad, _state, log) {
    const inputs = pathCostInputs(windowDays, load);
    const path = chooseSamplePath(inputs);
    log.debug({ windowDays, path }, 'sample covariance path');
    return { params: { path }, cost: samplePathCosts(inputs)[path] + rowsCost(load) };
  },
  // from the date before the first output date: the first change since then needs its covariance
  open: ({ path }, windowDays, input) => new SampleEstimate(input.returns, windowDays, path, Math.max(0, input.fromRow - 1)),
};

/** The distinct windows of a config list, shortest first. */
export function uniqueSorted(windows: readonly number[]): number[] {
  return [...new Set(windows)].sort((a, b) => a - b);
}
