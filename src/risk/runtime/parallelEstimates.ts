import { Worker } from 'node:worker_threads';
import { keepStates, type EstimatorStates } from '../estimators/estimator.ts';
import type { ResultBatch } from '../walk/resultColumns.ts';
import type { ComputeInputs, EstimateTask, WalkSettings } from '../walk/walkEstimate.ts';
import { estimatorModules } from '../estimators/registry.ts';
import { WORKER_ROLE, type WorkerData, type WorkerReply, type WorkerRequest } from './estimateWorker.ts';

/**
 * A worker thread running the module `name` beside `callerUrl` (the caller's
 * import.meta.url). Compiled (dist/, the built CLI) the module is plain JavaScript and
 * starts directly; run from the sources (tests, or the CLI before a build) a worker
 * thread does not inherit the tsx loader, so the boot file registers it first. execArgv
 * empty: whatever flags this process ran with.
 */
export function workerThread<Data extends { role: string }>(callerUrl: string, name: string, data: Data): Worker {
  if (!callerUrl.endsWith('.ts')) return new Worker(new URL(`./${name}.js`, callerUrl), { workerData: data, execArgv: [] });
  const module = new URL(`./${name}.ts`, callerUrl).href;
  return new Worker(new URL('./estimateWorkerBoot.mjs', import.meta.url), { workerData: { ...data, module }, execArgv: [] });
}

/**
 * Walks the estimates in `threads` worker threads. The inputs are shared, not copied
 * (SharedArrayBuffer); the tasks are handed out one at a time, largest first, to
 * whichever worker is free; every batch a worker posts goes to `onBatch` on this thread
 * as it arrives. Each walk is the same code as on the main thread, so the numbers are
 * the same bit for bit; only the order in which batches arrive differs.
 * Resolves with the states the estimators keep, as on the main thread. The workers have
 * the estimators of registry.ts and those added by module URL (registerEstimatorModule).
 */
export async function walkInWorkers(
  tasks: readonly { task: EstimateTask; cost: number }[],
  input: ComputeInputs,
  settings: WalkSettings,
  threads: number,
  onBatch: (batch: ResultBatch) => void,
): Promise<EstimatorStates> {
  const shared = shareInputs(input);
  const queue = tasks.map((t, taskId) => ({ taskId, task: t.task, cost: t.cost })).sort((a, b) => b.cost - a.cost);
  const estimatorOf = tasks.map((t) => t.task.estimator);
  const workers = Array.from(
    { length: Math.min(threads, queue.length) },
    () => workerThread(import.meta.url, 'estimateWorker', { role: WORKER_ROLE, estimatorModules: estimatorModules() } satisfies WorkerData),
  );
  const states: EstimatorStates = {};
  try {
    await new Promise<void>((resolve, reject) => {
      let running = 0;
      let failed = false;
      const fail = (err: Error) => {
        failed = true;
        reject(err);
      };
      const next = (worker: Worker) => {
        const item = queue.shift();
        if (!item) {
          if (running === 0) resolve();
          return;
        }
        running++;
        worker.postMessage({ type: 'run', taskId: item.taskId, task: item.task } satisfies WorkerRequest);
      };
      for (const worker of workers) {
        worker.on('message', (reply: WorkerReply) => {
          if (failed) return;
          if (reply.type === 'batch') {
            try {
              onBatch(reply.batch);
            } catch (err) {
              fail(err as Error);
            }
            return;
          }
          if (reply.type === 'failed') {
            fail(Object.assign(new Error(`risk estimate failed in a worker thread: ${reply.message}`), { stack: reply.stack }));
            return;
          }
          keepStates(states, estimatorOf[reply.taskId], reply.states);
          running--;
          next(worker);
        });
        worker.on('error', (err) => fail(new Error('risk estimate worker thread stopped', { cause: err })));
        worker.on('exit', (code) => {
          if (!failed && (running > 0 || queue.length > 0)) fail(new Error(`risk estimate worker thread exited with code ${code}`));
        });
        worker.postMessage({ type: 'init', input: shared, settings } satisfies WorkerRequest);
        next(worker);
      }
    });
  } finally {
    await Promise.all(workers.map((w) => w.terminate()));
  }
  return states;
}

/** The inputs with every typed array on a SharedArrayBuffer (inputs.ts allocates them so; anything else is copied once). */
function shareInputs(input: ComputeInputs): ComputeInputs {
  return { ...input, returns: sharedFields(input.returns), portfolios: sharedFields(input.portfolios), benchmarks: sharedFields(input.benchmarks) };
}

/** A panel with each of its typed-array fields shared. */
export function sharedFields<T extends object>(panel: T): T {
  const fields = Object.entries(panel).map(([key, value]) => [key, value instanceof Uint8Array || value instanceof Int32Array || value instanceof Float64Array ? shared(value) : value]);
  return Object.fromEntries(fields) as T;
}

type Typed = Uint8Array | Int32Array | Float64Array;

/** The array itself when already on a SharedArrayBuffer, else a shared copy. */
export function shared<A extends Typed>(a: A): A {
  if (a.buffer instanceof SharedArrayBuffer) return a;
  const copy = new (a.constructor as new (buffer: SharedArrayBuffer) => A)(new SharedArrayBuffer(a.byteLength));
  copy.set(a as never);
  return copy;
}
