import type { Command } from 'commander';
import { withConfigOption } from '../context.ts';

// PLACEHOLDER: replaced by the stage that owns this command.
export function registerDemo(program: Command): void {
  withConfigOption(program.command('demo').description('(not built yet)')).action(() => {
    throw new Error('demo is not built yet');
  });
}
