import { parentPort, workerData } from 'node:worker_threads';
import { historicalVarRows, type HistoricalInputs, type HistoricalSettings, type LossFailure } from './historicalVar.ts';
import type { VarRow } from './lossStage.ts';

/**
 * A worker thread of the loss stage: it walks one part of the run's dates
 * (historicalVarRows from `fromRow` to `toRow`) over inputs shared with the main thread
 * (SharedArrayBuffers, nothing copied), posting its rows in batches, each failed
 * portfolio, then `done`.
 */

export const HISTORICAL_WORKER_ROLE = 'riskfold-historical-var';

export interface HistoricalRequest {
  inputs: HistoricalInputs;
  settings: HistoricalSettings;
}

export type HistoricalReply =
  | { type: 'rows'; rows: [VarRow, number, number][] }
  | { type: 'failed'; failure: LossFailure }
  | { type: 'done' }
  | { type: 'error'; message: string; stack?: string };

/** Rows posted at once: few messages, and a bounded amount held in the worker. */
const BATCH = 4096;

// only as the loss stage's worker: a test runner's own worker thread may import this file too
if (parentPort && (workerData as { role?: string } | null)?.role === HISTORICAL_WORKER_ROLE) {
  const port = parentPort;
  port.once('message', ({ inputs, settings }: HistoricalRequest) => {
    try {
      let rows: [VarRow, number, number][] = [];
      historicalVarRows(
        inputs,
        settings,
        (row, p, d) => {
          rows.push([row, p, d]);
          if (rows.length < BATCH) return;
          port.postMessage({ type: 'rows', rows } satisfies HistoricalReply);
          rows = [];
        },
        (failure) => port.postMessage({ type: 'failed', failure } satisfies HistoricalReply),
      );
      port.postMessage({ type: 'rows', rows } satisfies HistoricalReply);
      port.postMessage({ type: 'done' } satisfies HistoricalReply);
    } catch (err) {
      const e = err instanceof Error ? err : new Error(String(err));
      port.postMessage({ type: 'error', message: e.message, stack: e.stack } satisfies HistoricalReply);
    }
  });
}
