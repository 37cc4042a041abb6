import os from 'node:os';
import type { Logger } from 'pino';
import type { Config } from '../config/load.ts';
import type { EwmaState } from './ewmaEstimate.ts';
import { walkEstimate, type ComputeInputs, type EstimateTask, type WalkSettings } from './estimateWalk.ts';
import type { PortfolioPanel, ReturnPanel } from './inputs.ts';
import { walkInWorkers } from './parallelEstimates.ts';
import type { Progress } from './progress.ts';
import type { ResultBatch } from './resultColumns.ts';
import { chooseSamplePath, samplePathCosts, slidingStartRow } from './sampleEstimate.ts';

/**
 * The risk stage's compute: one task per estimate (every rolling window, then the
 * EWMA), each walking the dates once. Big runs (a backfill) spread the tasks over
 * worker threads; small ones (a new day) stay on this thread, where starting a worker
 * would cost more than it saves. Either way every batch of rows goes to `sink` here.
 */

export type { ComputeInputs } from './estimateWalk.ts';

export interface ComputeOptions {
  /** Worker threads to use; 1 = this thread only; default: by the cost model. */
  threads?: number;
}

/**
 * Estimated work (in multiply-adds, as `samplePathCosts` counts) below which the run
 * stays on this thread: starting a worker and loading the TypeScript sources in it
 * takes a few hundred milliseconds, about what 3e8 multiply-adds take.
 */
export const PARALLEL_MIN_COST = 3e8;
/** Work of one portfolio row beyond its covariance product (coverage, VaR, staging). */
const ROW_COST = 2_000;

/** Number of progress units `computeRisk` reports: one per estimate and output date. */
export function progressUnits(config: Config, dateCount: number, fromRow: number): number {
  const estimates = uniqueWindows(config).length + shrunkWindows(config).length + (config.risk.ewma.enabled ? 1 : 0);
  return estimates * Math.max(0, dateCount - fromRow);
}

/** Computes every estimate into `sink`; returns the EWMA states at the last two dates, oldest first (none without EWMA or dates). */
export async function computeRisk(
  input: ComputeInputs,
  config: Config,
  sink: (batch: ResultBatch) => void,
  progress: Progress,
  log: Logger,
  options: ComputeOptions = {},
): Promise<EwmaState[]> {
  const tasks = planTasks(input, config, log);
  const settings: WalkSettings = {
    periodsPerYear: config.risk.tradingDaysPerYear,
    minCoverage: config.risk.minCoverage,
    weights: config.risk.weights,
    contributions: config.risk.contributions,
  };
  const totalCost = tasks.reduce((sum, t) => sum + t.cost, 0);
  const threads = options.threads ?? threadsFor(totalCost, tasks.length, os.availableParallelism());
  log.debug({ tasks: tasks.map((t) => ({ ...t.task, cost: t.cost })), totalCost, threads }, 'risk compute plan');
  const accept = (batch: ResultBatch) => {
    sink(batch);
    progress.advance(batch.dates);
  };
  if (threads > 1 && tasks.length > 1) return walkInWorkers(tasks, input, settings, threads, accept);
  const ewmaStates: EwmaState[] = [];
  for (const { task } of tasks) ewmaStates.push(...walkEstimate(task, input, settings, accept));
  return ewmaStates;
}

/** Worker threads for a run: one per task up to the cores, or none (1 = this thread) below PARALLEL_MIN_COST. */
export function threadsFor(totalCost: number, tasks: number, cores: number): number {
  return totalCost >= PARALLEL_MIN_COST ? Math.max(1, Math.min(cores, tasks)) : 1;
}

/** The run's estimates with the sample path each window takes and the cost of each. */
function planTasks(input: ComputeInputs, config: Config, log: Logger): { task: EstimateTask; cost: number }[] {
  const { returns, portfolios, fromRow } = input;
  const dateCount = returns.dates.length;
  const outputDates = Math.max(0, dateCount - fromRow);
  const load = holdingsLoad(returns, portfolios, fromRow);
  const rowsCost = outputDates * load.rowsPerDate * ROW_COST;
  const tasks: { task: EstimateTask; cost: number }[] = [];
  for (const windowDays of uniqueWindows(config)) {
    const inputs = {
      window: windowDays,
      securities: load.securitiesWithReturns,
      holdingsPerDate: load.perDate,
      holdingsSquaredPerDate: load.squaredPerDate,
      outputDates,
      warmupDates: fromRow - slidingStartRow(fromRow, windowDays),
    };
    const path = chooseSamplePath(inputs);
    log.debug({ windowDays, path }, 'sample covariance path');
    tasks.push({ task: { kind: 'sample', windowDays, path }, cost: samplePathCosts(inputs)[path] + rowsCost });
  }
  for (const windowDays of shrunkWindows(config)) {
    // per row: the shrinkage's pair sums over the window (three products per pair and date) and the product
    const cost = outputDates * (3 * windowDays * load.squaredPerDate + load.squaredPerDate) + rowsCost;
    tasks.push({ task: { kind: 'shrunk', windowDays }, cost });
  }
  if (config.risk.ewma.enabled && dateCount > 0) {
    const { lambda, seedDays } = config.risk.ewma;
    // without a stored state the EWMA replays from the first date
    const walked = input.ewmaState ? dateCount - input.ewmaState.row - 1 : dateCount;
    const n = load.securitiesWithReturns;
    const cost = walked * n * n + outputDates * load.squaredPerDate + rowsCost;
    tasks.push({ task: { kind: 'ewma', lambda, seedDays }, cost });
  }
  return tasks;
}

function uniqueWindows(config: Config): number[] {
  return [...new Set(config.risk.windows)].sort((a, b) => a - b);
}

function shrunkWindows(config: Config): number[] {
  return [...new Set(config.risk.shrunk.windows)].sort((a, b) => a - b);
}

/** Average work per output date, for the choice of the sample path and of threads. */
function holdingsLoad(returns: ReturnPanel, portfolios: PortfolioPanel, fromRow: number) {
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
  return { securitiesWithReturns, perDate: sum / dates, squaredPerDate: squares / dates, rowsPerDate: rows / dates };
}
