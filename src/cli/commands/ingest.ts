import type { Command } from 'commander';
import { withConfigOption } from '../context.ts';

// PLACEHOLDER: replaced by the stage that owns this command.
export function registerIngest(program: Command): void {
  withConfigOption(program.command('ingest').description('(not built yet)')).action(() => {
    throw new Error('ingest is not built yet');
  });
}
