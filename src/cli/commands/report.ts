import type { Command } from 'commander';
import { withConfigOption } from '../context.ts';

// PLACEHOLDER: replaced by the stage that owns this command.
export function registerReport(program: Command): void {
  withConfigOption(program.command('report').description('(not built yet)')).action(() => {
    throw new Error('report is not built yet');
  });
}
