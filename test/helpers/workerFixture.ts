import { afterEach } from 'vitest';
import { endCli, type RunningCli } from '../cli/cliProcess.ts';
import type { WorkerDir } from './workspace.ts';

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
