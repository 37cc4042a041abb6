import type { Command } from 'commander';
import { lazyAction, withConfigOption } from '../define.ts';

/** `riskfold explain --portfolio P --date D [--window W]`: where a figure came from and which runs made and replaced it. */
export function registerExplain(program: Command): void {
  withConfigOption(
    program
      .command('explain')
      .description('one portfolio\'s figure on one date: what went into it, the files behind it, and the runs that made and replaced it')
      .requiredOption('--portfolio <id>', 'portfolio id, as in the positions files')
      .requiredOption('--date <date>', 'valuation date (YYYY-MM-DD)')
      .option('--window <days>', 'only this window in trading days (0 = ewma); default every window')
      .option('--format <format>', 'table (percentages), csv or json (full precision)', 'table'),
  ).action(lazyAction(async () => (await import('../actions/explain.ts')).runExplain));
}
