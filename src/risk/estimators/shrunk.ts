import { ledoitWolfConstantCorrelation } from '../math/shrinkage.ts';
import type { ReturnPanel } from '../inputs/panels.ts';
import { rowsCost } from '../runtime/costModel.ts';
import type { DateEstimate, EstimatorPlugin } from './estimator.ts';
import { SampleEstimate, uniqueSorted } from './sample.ts';

/**
 * The `shrunk` estimate over a window of W returns: Ledoit-Wolf shrinkage of the sample
 * covariance toward the constant-correlation target (src/risk/math/shrinkage.ts), with
 * the intensity estimated from the window. Shrinkage depends on which securities are
 * shrunk together (the target's one correlation is their average), so the matrix is
 * made per product, over the securities asked for: a portfolio's covered holdings.
 *
 * Per security it is the sample estimate: the target keeps the sample variances, so
 * coverage, variances and security_stats (written once, by the sample estimate of the
 * same window) are those of the window path of `SampleEstimate`, which this wraps.
 *
 * A holding whose returns do not vary over the window has zero variance and zero
 * covariances, in S and in the target alike; its correlation is undefined, so it is
 * left out of the shrinkage and its row of the product is 0. With fewer than two
 * varying holdings there is nothing to shrink: the sample matrix, intensity unknown.
 */
export class ShrunkEstimate implements DateEstimate {
  readonly startRow: number;
  private readonly sample: SampleEstimate;
  /** Shrunk matrices of the current date by their securities (a row and its vol_change ask for the same sets). */
  private readonly made = new Map<string, { risky: Int32Array; covariance: Float64Array; intensity: number }>();
  private intensity = Number.NaN;

  constructor(
    private readonly panel: ReturnPanel,
    readonly windowDays: number,
    fromRow: number,
  ) {
    this.sample = new SampleEstimate(panel, windowDays, 'window', fromRow);
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
    const { risky, covariance } = made;
    const k = risky.length;
    out.fill(0);
    for (let a = 0; a < k; a++) {
      let sum = 0;
      for (let b = 0; b < k; b++) sum += covariance[a * k + b] * w[risky[b]];
      out[risky[a]] = sum;
    }
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

  /** The shrunk matrix over the varying securities of idx; risky[a] is the position in idx of its a-th security. */
  private shrunkOver(idx: Int32Array) {
    const key = idx.join(',');
    const known = this.made.get(key);
    if (known) return known;
    const positions: number[] = [];
    for (let a = 0; a < idx.length; a++) if (this.variance(idx[a]) > 0) positions.push(a);
    const risky = Int32Array.from(positions);
    const k = risky.length;
    const { windowDays: rows, panel } = this;
    const t = panel.dates.length;
    const first = this.sample.currentRow - rows + 1;
    let made: { risky: Int32Array; covariance: Float64Array; intensity: number };
    if (k < 2) {
      made = { risky, covariance: Float64Array.from(positions, (a) => this.variance(idx[a])), intensity: Number.NaN };
    } else {
      // dates x securities, row-major, as the shrinkage takes them
      const x = new Float64Array(rows * k);
      for (let b = 0; b < k; b++) {
        const series = panel.returnsBySecurity.subarray(idx[risky[b]] * t + first, idx[risky[b]] * t + first + rows);
        for (let u = 0; u < rows; u++) x[u * k + b] = series[u];
      }
      const shrunk = ledoitWolfConstantCorrelation(x, rows, k);
      made = { risky, covariance: shrunk.covariance, intensity: shrunk.intensity };
    }
    this.made.set(key, made);
    return made;
  }
}

/** Ledoit-Wolf shrinkage for the windows of risk.shrunk.windows; tracking_error_realized stays on the sample rows. */
export const shrunkEstimator: EstimatorPlugin = {
  name: 'shrunk',
  realized: { volatility: true, trackingError: false },
  windows: (config) => uniqueSorted(config.risk.shrunk.windows),
  // per row: the shrinkage's pair sums over the window (three products per pair and date) and the product
  plan: (windowDays, _config, load) => ({
    params: null,
    cost: load.outputDates * (3 * windowDays * load.squaredPerDate + load.squaredPerDate) + rowsCost(load),
  }),
  open: (_params, windowDays, input) => new ShrunkEstimate(input.returns, windowDays, Math.max(0, input.fromRow - 1)),
};
