import { parentPort, workerData } from 'node:worker_threads';
import { registerEstimatorModule } from '../estimators/registry.ts';
import { batchBuffers, type ResultBatch } from '../walk/resultColumns.ts';
import { walkEstimate, type ComputeInputs, type EstimateTask, type WalkSettings } from '../walk/walkEstimate.ts';

/**
 * A worker thread of the risk stage: it receives the inputs once (their typed arrays on
 * SharedArrayBuffers, so nothing is copied), then walks the estimates it is given one
 * after the other, posting each batch of rows as it fills (buffers transferred) and the
 * states the estimate keeps when its walk ends.
 */

export const WORKER_ROLE = 'riskfold-estimates';

/** What a worker thread is started with: its role, and the estimator modules added at run time, to import first. */
export interface WorkerData {
  role: typeof WORKER_ROLE;
  estimatorModules: string[];
}

export type WorkerRequest = { type: 'init'; input: ComputeInputs; settings: WalkSettings } | { type: 'run'; taskId: number; task: EstimateTask };

export type WorkerReply =
  | { type: 'batch'; taskId: number; batch: ResultBatch }
  | { type: 'done'; taskId: number; states: unknown[] }
  | { type: 'failed'; taskId: number; message: string; stack?: string };

// only as the risk stage's worker: a test runner's own worker thread may import this file too
if (parentPort && (workerData as Partial<WorkerData> | null)?.role === WORKER_ROLE) {
  const port = parentPort;
  // before the first message is handled (messages wait in the port until a listener is added)
  for (const href of (workerData as WorkerData).estimatorModules) await registerEstimatorModule(href);
  let context: { input: ComputeInputs; settings: WalkSettings } | null = null;
  port.on('message', (request: WorkerRequest) => {
    if (request.type === 'init') {
      context = { input: request.input, settings: request.settings };
      return;
    }
    const { taskId, task } = request;
    try {
      if (!context) throw new Error('estimate worker: run before init');
      const states = walkEstimate(task, context.input, context.settings, (batch) => {
        port.postMessage({ type: 'batch', taskId, batch } satisfies WorkerReply, batchBuffers(batch));
      });
      port.postMessage({ type: 'done', taskId, states } satisfies WorkerReply);
    } catch (err) {
      const e = err instanceof Error ? err : new Error(String(err));
      port.postMessage({ type: 'failed', taskId, message: e.message, stack: e.stack } satisfies WorkerReply);
    }
  });
}
