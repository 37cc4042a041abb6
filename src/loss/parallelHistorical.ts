import os from 'node:os';
import { threadsFor } from '../risk/runtime/costModel.ts';
import { shared, sharedFields, workerThread } from '../risk/runtime/parallelEstimates.ts';
import { historicalVarRows, type HistoricalInputs, type HistoricalSettings, type LossFailure } from './historicalVar.ts';
import { HISTORICAL_WORKER_ROLE, type HistoricalReply, type HistoricalRequest } from './historicalWorker.ts';
import type { VarRow } from './lossStage.ts';

/**
 * The historical and filtered historical VaR of a run, on this thread or, when the run
 * is big enough to pay for starting workers (a backfill; the risk stage's threshold,
 * costModel.ts), split by dates into one contiguous part per core. A part holds every
 * portfolio, so each date's filtered scenarios are still made once; every row is the
 * same code on the same inputs, so the figures are the same whichever thread made them.
 */

/** Multiply-adds one filtered scenario return costs beside one holding's (its exp and ratio). */
const EXP_COST = 20;

/** Like historicalVarRows over the whole run; resolves once every row and failure is handed over. */
export async function walkHistorical(
  inputs: HistoricalInputs,
  settings: HistoricalSettings,
  emit: (row: VarRow, p: number, d: number) => void,
  fail: (failure: LossFailure) => void,
  threads?: number,
): Promise<void> {
  const costs = dateCosts(inputs, settings);
  const total = costs.reduce((a, b) => a + b, 0);
  const parts = threads ?? threadsFor(total, costs.length, os.availableParallelism());
  if (parts <= 1) return historicalVarRows(inputs, settings, emit, fail);
  const bounds = splitByCost(costs, parts).map((from) => from + inputs.fromRow);
  const common = {
    ...inputs,
    returns: sharedFields(inputs.returns),
    portfolios: sharedFields(inputs.portfolios),
    sigmaAfter: shared(inputs.sigmaAfter),
  };
  const requests = bounds.map((from, k) => ({ inputs: { ...common, fromRow: from, toRow: bounds[k + 1] ?? inputs.toRow }, settings }));
  await Promise.all(requests.map((request) => walkInWorker(request, emit, fail)));
}

/** One part in its own worker thread; the worker ends with it. */
function walkInWorker(request: HistoricalRequest, emit: (row: VarRow, p: number, d: number) => void, fail: (failure: LossFailure) => void): Promise<void> {
  const worker = workerThread(import.meta.url, 'historicalWorker', { role: HISTORICAL_WORKER_ROLE });
  return new Promise<void>((resolve, reject) => {
    let settled = false;
    const finish = (err?: Error) => {
      if (settled) return;
      settled = true;
      void worker.terminate();
      if (err) reject(err);
      else resolve();
    };
    worker.on('message', (reply: HistoricalReply) => {
      if (settled) return;
      try {
        if (reply.type === 'rows') for (const [row, p, d] of reply.rows) emit(row, p, d);
        else if (reply.type === 'failed') fail(reply.failure);
        else if (reply.type === 'done') finish();
        else finish(Object.assign(new Error(`historical VaR failed in a worker thread: ${reply.message}`), { stack: reply.stack }));
      } catch (err) {
        finish(err as Error);
      }
    });
    worker.on('error', (err) => finish(new Error('historical VaR worker thread stopped', { cause: err })));
    worker.on('exit', (code) => finish(new Error(`historical VaR worker thread exited with code ${code} before it was done`)));
    worker.postMessage(request);
  });
}

/**
 * Estimated work of each date of the run (index 0: fromRow): every present portfolio's
 * holdings revalued under the longest usable lookback, twice (both methods), and each
 * security's filtered scenarios of that date.
 */
function dateCosts(inputs: HistoricalInputs, settings: HistoricalSettings): number[] {
  const { returns, portfolios, fromRow } = inputs;
  const t = returns.dates.length;
  const end = inputs.toRow ?? t;
  const longest = Math.max(...settings.days);
  const shortest = Math.min(...settings.days);
  const costs: number[] = [];
  for (let d = fromRow; d < end; d++) {
    let holdings = 0;
    for (let p = 0; p < portfolios.ids.length; p++) {
      const slot = p * t + d;
      if (portfolios.present[slot] === 1) holdings += portfolios.offsets[slot + 1] - portfolios.offsets[slot];
    }
    const lookback = d >= longest ? longest : d >= shortest ? shortest : 0;
    costs.push(holdings === 0 ? 0 : lookback * (2 * holdings + EXP_COST * returns.securityIds.length));
  }
  return costs;
}

/** The first index of each of `parts` contiguous parts of about equal cost (the first part starts at 0). */
function splitByCost(costs: readonly number[], parts: number): number[] {
  const total = costs.reduce((a, b) => a + b, 0);
  const starts = [0];
  let sum = 0;
  for (let i = 0; i < costs.length && starts.length < parts; i++) {
    sum += costs[i];
    if (sum >= (total * starts.length) / parts && i + 1 < costs.length) starts.push(i + 1);
  }
  return starts;
}
