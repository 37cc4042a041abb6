import type { Command } from 'commander';
import { withConfigOption } from '../context.ts';

// PLACEHOLDER: replaced by the stage that owns this command.
export function registerRecompute(program: Command): void {
  withConfigOption(program.command('recompute').description('(not built yet)')).action(() => {
    throw new Error('recompute is not built yet');
  });
}
