import { centreSeriesInto } from '../math/covariance.ts';
import { ledoitWolfIntensity, shrunkTimes } from '../math/shrinkage.ts';
import type { ReturnPanel } from '../inputs/panels.ts';
import { rowsCost, type RunLoad } from '../runtime/costModel.ts';
import type { DateEstimate, EstimatorPlugin } from './estimator.ts';
import { cheaperPath, pathCostInputs, SampleEstimate, uniqueSorted, type PathCostInputs, type SamplePath } from './sample.ts';

/**
 * The `shrunk` estimate over a window of W returns: Ledoit-Wolf shrinkage of the sample
 * covariance toward the constant-correlation target (src/risk/math/shrinkage.ts), with
 * the intensity estimated from the window. Shrinkage depends on which securities are
 * shrunk together (the target's one correlation is their average), so it is made per
 * product, over the securities asked for: a portfolio's covered holdings.
 *
 * S comes from a `SampleEstimate` of the same window on the path the cost model picks:
 * a sliding state over all securities (a backfill: O(N^2) per date, shared) or the
 * centred window (a few dates: O(W n^2) per portfolio). Given S, the intensity and the
 * product cost O(n^2 + W n) per portfolio and date, never the O(W n^2) pair sums.
 *
 * Per security it is the sample estimate: the target keeps the sample variances, so
 * coverage, variances and security_stats (written once, by the sample estimate of the
 * same window) are those of `SampleEstimate`, which this wraps.
 *
 * A holding whose returns do not vary over the window (a price delivered unchanged, a
 * fund accruing at a fixed rate) has zero variance and zero covariances, in S and in
 * the target alike; its correlation is undefined, so it is left out of the shrinkage
 * (found by comparing its returns, not by a variance that rounding leaves above zero)
 * and its row of the product is 0. With fewer than two
 * varying holdings there is nothing to shrink: the sample matrix, intensity unknown.
 */

export class ShrunkEstimate implements DateEstimate {
  readonly startRow: number;
  private readonly sample: SampleEstimate;
  /** Shrinkages of the current date by their securities (a row and its vol_change ask for the same sets). */
  private readonly made = new Map<string, Shrinkage>();
  private intensity = Number.NaN;
  private readonly oneMean = new Float64Array(1);

  constructor(
    private readonly panel: ReturnPanel,
    readonly windowDays: number,
    path: SamplePath,
    fromRow: number,
  ) {
    this.sample = new SampleEstimate(panel, windowDays, path, fromRow);
    this.startRow = this.sample.startRow;
  }

  advance(d: number, output: boolean): void {
    this.sample.advance(d, output);
    this.made.clear();
  }

  covered(j: number): boolean {
    return this.sample.covered(j);
  }

  variance(j: number): number {
    return this.sample.variance(j);
  }

  product(idx: Int32Array, w: Float64Array, out = new Float64Array(idx.length)): Float64Array {
    const made = this.shrunkOver(idx);
    this.intensity = made.intensity;
    const { risky, s } = made;
    const k = risky.length;
    out.fill(0);
    if (k < 2) {
      for (let a = 0; a < k; a++) out[risky[a]] = s[a] * w[risky[a]];
      return out;
    }
    const weights = Float64Array.from(risky, (a) => w[a]);
    const shrunk = shrunkTimes(s, k, this.windowDays, made, weights, new Float64Array(k));
    for (let a = 0; a < k; a++) out[risky[a]] = shrunk[a];
    return out;
  }

  /** The intensity of the last product (NaN: nothing shrunk), and forget it. */
  takeIntensity(): number {
    const intensity = this.intensity;
    this.intensity = Number.NaN;
    return intensity;
  }

  /** Written by the sample estimate of the same window. */
  forEachSecurity(): void {}

  /** The shrinkage over the varying securities of idx; risky[a] is the position in idx of its a-th security. */
  private shrunkOver(idx: Int32Array): Shrinkage {
    const key = idx.join(',');
    const known = this.made.get(key);
    if (known) return known;
    const positions: number[] = [];
    for (let a = 0; a < idx.length; a++) if (this.varies(idx[a])) positions.push(a);
    const risky = Int32Array.from(positions);
    const k = risky.length;
    let made: Shrinkage;
    if (k < 2) {
      made = { risky, s: Float64Array.from(positions, (a) => this.variance(idx[a])), intensity: Number.NaN, averageCorrelation: Number.NaN };
    } else {
      const rows = this.windowDays;
      const ids = Int32Array.from(risky, (a) => idx[a]);
      // S in the paper's divisor W, as the intensity takes it
      const s = this.sample.subMatrix(ids, rows);
      const { intensity, averageCorrelation } = ledoitWolfIntensity(s, this.centredWindow(ids), rows, k);
      made = { risky, s, intensity, averageCorrelation };
    }
    this.made.set(key, made);
    return made;
  }

  /**
   * Whether covered security j's returns differ within the window, tested exactly: a
   * sliding state can leave a constant series a rounding-level variance, whose
   * "correlations" would be noise over noise and spoil the target's average.
   */
  private varies(j: number): boolean {
    if (!this.covered(j)) return false;
    const t = this.panel.dates.length;
    const base = j * t + this.sample.currentRow - this.windowDays + 1;
    const series = this.panel.returnsBySecurity;
    for (let u = 1; u < this.windowDays; u++) if (series[base + u] !== series[base]) return true;
    return false;
  }

  /** The window's returns of `ids`, each centred on its mean, security by security (k x W). */
  private centredWindow(ids: Int32Array): Float64Array {
    const { windowDays: rows, panel } = this;
    const t = panel.dates.length;
    const first = this.sample.currentRow - rows + 1;
    const series = new Float64Array(ids.length * rows);
    for (let a = 0; a < ids.length; a++) {
      const own = panel.returnsBySecurity.subarray(ids[a] * t, (ids[a] + 1) * t);
      centreSeriesInto(own, t, first, rows, this.oneMean, series.subarray(a * rows, (a + 1) * rows));
    }
    return series;
  }
}

/** S of the varying securities (divisor W; their variances alone when fewer than two), with the shrinkage made from it. */
interface Shrinkage {
  risky: Int32Array;
  s: Float64Array;
  intensity: number;
  averageCorrelation: number;
}

/**
 * Multiply-adds of each way to get S for the shrinkage over a run. Both then pay per
 * product for the intensity (three passes over the upper triangle, four over the W x n
 * window) and the product (one over the triangle); the sliding state pays N^2 per date
 * fed, the window path centres all N series and sums W n^2 / 2 per product, or W N^2 / 2
 * per date once the portfolios' pairs cover the universe (each pair is summed once a date).
 */
export function shrunkPathCosts(c: PathCostInputs): Record<SamplePath, number> {
  const perProduct = c.outputDates * (2 * c.holdingsSquaredPerDate + 4 * c.window * c.holdingsPerDate);
  const pairs = Math.min(c.holdingsSquaredPerDate, c.securities * c.securities);
  return {
    sliding: (c.outputDates + c.warmupDates) * c.securities * c.securities + perProduct,
    window: c.outputDates * (c.window * c.securities + (c.window * pairs) / 2) + perProduct,
  };
}

/** Ledoit-Wolf shrinkage for the windows of risk.shrunk.windows; tracking_error_realized stays on the sample rows. */
export const shrunkEstimator: EstimatorPlugin<{ path: SamplePath }> = {
  name: 'shrunk',
  realized: { volatility: true, trackingError: false },
  windows: (config) => uniqueSorted(config.risk.shrunk.windows),
  plan(windowDays, _config, load: RunLoad, _state, log) {
    const costs = shrunkPathCosts(pathCostInputs(windowDays, load));
    const path = cheaperPath(costs);
    log.debug({ windowDays, path }, 'shrunk covariance path');
    return { params: { path }, cost: costs[path] + rowsCost(load) };
  },
  open: ({ path }, windowDays, input) => new ShrunkEstimate(input.returns, windowDays, path, Math.max(0, input.fromRow - 1)),
};
