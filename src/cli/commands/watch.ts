import type { Command } from 'commander';
import { lazyAction, withConfigOption } from '../define.ts';

export function registerWatch(program: Command): void {
  withConfigOption(
    program
      .command('watch')
      .description('the worker: catches up on the inbox, then watches it; logs JSON lines on stderr; stops cleanly on SIGINT/SIGTERM'),
  ).action(lazyAction(async () => (await import('../actions/watch.ts')).runWatch));
}
