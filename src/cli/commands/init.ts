import type { Command } from 'commander';
import { withConfigOption } from '../context.ts';

// PLACEHOLDER: replaced by the stage that owns this command.
export function registerInit(program: Command): void {
  withConfigOption(program.command('init').description('(not built yet)')).action(() => {
    throw new Error('init is not built yet');
  });
}
