import type { Command } from 'commander';
import { startSchedules } from '../../schedule/startSchedules.ts';
import { startWorker } from '../../worker/startWorker.ts';
import { contextFrom, withConfigOption } from '../context.ts';

export function registerWatch(program: Command): void {
  withConfigOption(
    program
      .command('watch')
      .description('the worker: catches up on the inbox, then watches it; logs JSON lines on stderr; stops cleanly on SIGINT/SIGTERM'),
  ).action(async (opts: { config: string }) => {
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
  });
}
