import { afterEach } from 'vitest';
import { endCli, type RunningCli } from '../cli/cliProcess.ts';
import type { ConfigInput } from '../../src/config/schema.ts';
import { memoryLogger } from '../../src/log/logger.ts';
import { startWorker, type Worker } from '../../src/worker/startWorker.ts';
import { workerDir, type WorkerDir } from './workspace.ts';

export interface WorkerSlot {
  wd?: WorkerDir;
  worker?: RunningCli;
}

/** Registers an afterEach that ends the test's worker process (if still running) and removes its folder; the test fills the slot. */
export function workerSlot(): WorkerSlot {
  const slot: WorkerSlot = {};
  afterEach(async () => {
    await endCli(slot.worker);
    slot.wd?.cleanup();
    slot.worker = undefined;
    slot.wd = undefined;
  });
  return slot;
}

export interface StartedWorker {
  wd: WorkerDir;
  worker: Worker;
  lines: () => Record<string, unknown>[];
}

/**
 * The in-process counterpart of workerSlot: `start` makes a worker folder with `overrides`,
 * starts a worker on it with a memory logger and waits until it is idle; an afterEach
 * stops whatever is still running and removes the folder. `stop` ends it early, for a
 * test that reads the database afterwards.
 */
export function inProcessWorker(): { start: (overrides?: Partial<ConfigInput>) => Promise<StartedWorker>; stop: () => Promise<void> } {
  let started: StartedWorker | undefined;
  let running = false;
  const stop = async () => {
    if (running) await started?.worker.stop();
    running = false;
  };
  afterEach(async () => {
    await stop();
    started?.wd.cleanup();
    started = undefined;
  });
  return {
    start: async (overrides = {}) => {
      const wd = workerDir(overrides);
      const { log, lines } = memoryLogger();
      const worker = await startWorker(wd.config, log);
      started = { wd, worker, lines };
      running = true;
      await worker.idle();
      return started;
    },
    stop,
  };
}
