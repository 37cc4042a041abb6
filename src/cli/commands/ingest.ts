import type { Command } from 'commander';
import { lazyAction, withConfigOption } from '../define.ts';

export function registerIngest(program: Command): void {
  withConfigOption(
    program
      .command('ingest')
      .description('loads the given files, or everything now in the inbox, exactly as the worker would, then exits')
      .argument('[files...]', 'files to load (default: every delivery in the inbox, oldest first)')
      .option('--strict', 'exit non-zero when any file was rejected or held in the inbox, or a portfolio could not be computed (for scheduled scripts)'),
  ).action(lazyAction(async () => (await import('../actions/ingest.ts')).runIngest));
}
