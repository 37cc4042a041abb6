import { afterEach, describe, it } from 'vitest';
import { workerDir, type WorkerDir } from '../helpers/workspace.ts';
import { deliver, expectLedgerWhole, killedWorkerAt, preload, restart, type Delivery } from './killScenario.ts';

// a duplicate, a rejected and a good delivery: the duplicate meets the first ledger write
// and the first move, the good one the commit, all of them the publish after the batch
const ORDER: Delivery[] = ['duplicate', 'bad', 'good'];

describe('the ledger after a kill of the worker (real process) at each step of a file\'s life', () => {
  let wd: WorkerDir | undefined;
  afterEach(() => wd?.cleanup());

  for (const step of ['committed', 'recorded', 'linked', 'moved', 'copied']) {
    it(`killed at "${step}", then restarted: one ledger row per delivery, one copy per row, nothing left in the inbox`, async () => {
      wd = workerDir();
      await preload(wd);
      deliver(wd, ORDER);
      await killedWorkerAt(wd, step);
      await restart(wd);
      await expectLedgerWhole(wd, ORDER);
    });
  }
});
