import type { Command } from 'commander';
import { withConfigOption } from '../context.ts';

// PLACEHOLDER: replaced by the stage that owns this command.
export function registerSql(program: Command): void {
  withConfigOption(program.command('sql').description('(not built yet)')).action(() => {
    throw new Error('sql is not built yet');
  });
}
