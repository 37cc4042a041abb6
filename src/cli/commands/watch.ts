import type { Command } from 'commander';
import { withConfigOption } from '../context.ts';

// PLACEHOLDER: replaced by the stage that owns this command.
export function registerWatch(program: Command): void {
  withConfigOption(program.command('watch').description('(not built yet)')).action(() => {
    throw new Error('watch is not built yet');
  });
}
