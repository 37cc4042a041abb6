import { startSchedules } from '../../schedule/startSchedules.ts';
import { startWorker } from '../../worker/startWorker.ts';
import { contextFrom } from '../context.ts';

/** `riskfold watch`: runs until a signal stops the worker. */
export async function runWatch(opts: { config?: string }): Promise<void> {
  const { config, log } = contextFrom(opts);
  const worker = await startWorker(config, log, { startSchedules });
  let signalled = false;
  const onSignal = (signal: NodeJS.Signals) => {
    if (signalled) {
      // a second Ctrl-C: the user does not want to wait; the per-file transaction keeps the data safe
      log.warn({ signal }, 'second signal, exiting without waiting');
      process.exit(130);
    }
    signalled = true;
    log.info({ signal }, 'signal received');
    void worker.stop();
  };
  process.on('SIGINT', onSignal);
  process.on('SIGTERM', onSignal);
  await worker.done;
}
