import type { Command } from 'commander';
import { lazyAction, withConfigOption } from '../define.ts';

export function registerInit(program: Command): void {
  withConfigOption(
    program
      .command('init')
      .description('writes a starter pipeline.config.json (with its JSON Schema) and the inbox, archive and quarantine folders')
      .argument('[dir]', 'folder to set up', '.'),
  ).action(lazyAction(async () => (await import('../actions/init.ts')).runInit));
}
