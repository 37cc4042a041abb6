import type { Command } from 'commander';
import { withConfigOption } from '../context.ts';

// PLACEHOLDER: replaced by the stage that owns this command.
export function registerStatus(program: Command): void {
  withConfigOption(program.command('status').description('(not built yet)')).action(() => {
    throw new Error('status is not built yet');
  });
}
