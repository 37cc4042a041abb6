import os from 'node:os';
import { setImmediate } from 'node:timers/promises';
import type { Logger } from 'pino';
import type { Config } from '../../config/load.ts';
import { keepStates, type EstimatorStates } from '../estimators/estimator.ts';
import { registeredEstimators } from '../estimators/registry.ts';
import { walkEstimate, type ComputeInputs, type EstimateTask, type WalkSettings } from '../walk/walkEstimate.ts';
import type { ResultBatch } from '../walk/resultColumns.ts';
import { runLoad, threadsFor } from './costModel.ts';
import { walkInWorkers } from './parallelEstimates.ts';
import type { Progress } from './progress.ts';

/**
 * The risk stage's compute: one task per estimate (each registered estimator's
 * windows, in registration order), each walking the dates once. Big runs (a backfill)
 * spread the tasks over worker threads; small ones (a new day) stay on this thread,
 * where starting a worker would cost more than it saves. Either way every batch of
 * rows goes to `sink` here.
 */

export type { ComputeInputs } from '../walk/walkEstimate.ts';

export interface ComputeOptions {
  /** Worker threads to use; 1 = this thread only; default: by the cost model. */
  threads?: number;
}

/** Number of progress units `computeRisk` reports: one per estimate and output date. */
export function progressUnits(config: Config, dateCount: number, fromRow: number): number {
  const estimates = registeredEstimators().reduce((sum, plugin) => sum + plugin.windows(config).length, 0);
  return estimates * Math.max(0, dateCount - fromRow);
}

/** Computes every estimate into `sink`; returns the states the estimators keep (at the last dates). */
export async function computeRisk(
  input: ComputeInputs,
  config: Config,
  sink: (batch: ResultBatch) => void,
  progress: Progress,
  log: Logger,
  options: ComputeOptions = {},
): Promise<EstimatorStates> {
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
  const states: EstimatorStates = {};
  for (const { task } of tasks) {
    keepStates(states, task.estimator, walkEstimate(task, input, settings, accept));
    // a read started beside the estimates (the loss stage's, storedReads.ts) takes its
    // next step only when this thread awaits: one turn between estimates lets it finish
    // meanwhile, not after them
    await setImmediate();
  }
  return states;
}

/** Every registered estimator's estimates with the parameters and cost each plan gives; none without dates. */
function planTasks(input: ComputeInputs, config: Config, log: Logger): { task: EstimateTask; cost: number }[] {
  const { returns, portfolios, fromRow } = input;
  if (returns.dates.length === 0) return [];
  const load = runLoad(returns, portfolios, fromRow);
  return registeredEstimators().flatMap((plugin) =>
    plugin.windows(config).map((windowDays) => {
      const { params, cost } = plugin.plan(windowDays, config, load, input.states[plugin.name] ?? null, log);
      return { task: { estimator: plugin.name, windowDays, params }, cost };
    }),
  );
}
