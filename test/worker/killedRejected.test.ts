import { afterEach, describe, it } from 'vitest';
import { workerDir, type WorkerDir } from '../helpers/workspace.ts';
import { deliver, expectLedgerWhole, killedWorkerAt, preload, restart, type Delivery } from './killScenario.ts';

// the rejected delivery first: it meets the first ledger write and the first move
const ORDER: Delivery[] = ['bad', 'good'];

describe('the ledger after a kill of the worker (real process) while a rejected file is put away', () => {
  let wd: WorkerDir | undefined;
  afterEach(() => wd?.cleanup());

  for (const step of ['recorded', 'linked', 'moved']) {
    it(`killed at "${step}", then restarted: the rejected file has one row, one copy and its reason file`, async () => {
      wd = workerDir();
      await preload(wd);
      deliver(wd, ORDER);
      await killedWorkerAt(wd, step);
      await restart(wd);
      await expectLedgerWhole(wd, ORDER);
    });
  }
});
