import type { PortfolioPanel, ReturnPanel } from '../inputs/panels.ts';

/**
 * The cost model: each estimator counts the multiply-adds of its own estimate
 * (EstimatorPlugin.plan); here is the work every estimate shares and the choice of
 * threads that the total decides.
 */

/**
 * Estimated work (in multiply-adds) below which the run stays on this thread: starting
 * a worker and loading the TypeScript sources in it takes a few hundred milliseconds,
 * about what 3e8 multiply-adds take.
 */
export const PARALLEL_MIN_COST = 3e8;
/** Work of one portfolio row beyond its covariance product (coverage, VaR, staging). */
const ROW_COST = 2_000;

/** The size of a run, as the estimators' costs read it. */
export interface RunLoad {
  dateCount: number;
  fromRow: number;
  outputDates: number;
  /** Securities with at least one return. */
  securitiesWithReturns: number;
  /** Per output date, summed over portfolios: non-cash holdings n_p, and n_p^2. */
  perDate: number;
  squaredPerDate: number;
  /** Portfolio rows per output date. */
  rowsPerDate: number;
}

/** Worker threads for a run: one per task up to the cores, or none (1 = this thread) below PARALLEL_MIN_COST. */
export function threadsFor(totalCost: number, tasks: number, cores: number): number {
  return totalCost >= PARALLEL_MIN_COST ? Math.max(1, Math.min(cores, tasks)) : 1;
}

/** The rows' own work of one estimate over the run. */
export function rowsCost(load: RunLoad): number {
  return load.outputDates * load.rowsPerDate * ROW_COST;
}

/** Average work per output date, for the estimators' costs and the choice of threads. */
export function runLoad(returns: ReturnPanel, portfolios: PortfolioPanel, fromRow: number): RunLoad {
  const dateCount = returns.dates.length;
  const n = returns.securityIds.length;
  let securitiesWithReturns = 0;
  for (let j = 0; j < n; j++) {
    for (let d = 0; d < dateCount; d++) {
      if (returns.runLength[d * n + j] > 0) {
        securitiesWithReturns++;
        break;
      }
    }
  }
  let sum = 0;
  let squares = 0;
  let rows = 0;
  for (let p = 0; p < portfolios.ids.length; p++) {
    for (let d = fromRow; d < dateCount; d++) {
      const slot = p * dateCount + d;
      rows += portfolios.present[slot];
      let k = 0;
      for (let h = portfolios.offsets[slot]; h < portfolios.offsets[slot + 1]; h++) k += returns.isCash[portfolios.security[h]] === 1 ? 0 : 1;
      sum += k;
      squares += k * k;
    }
  }
  const dates = Math.max(1, dateCount - fromRow);
  return {
    dateCount,
    fromRow,
    outputDates: Math.max(0, dateCount - fromRow),
    securitiesWithReturns,
    perDate: sum / dates,
    squaredPerDate: squares / dates,
    rowsPerDate: rows / dates,
  };
}
