import type { Command } from 'commander';
import { lazyAction, withConfigOption } from '../define.ts';

export function registerStatus(program: Command): void {
  withConfigOption(
    program
      .command('status')
      .description('each portfolio against its limits, the day\'s files, the last run, undelivered alerts and data problems')
      .option('--format <format>', 'table (percentages), csv or json (full precision)', 'table')
      .option('--portfolio <id>', 'only this portfolio')
      .option('--details', 'also list the files, open breaches, alerts and data problems row by row'),
  ).action(lazyAction(async () => (await import('../actions/status.ts')).runStatus));
}
