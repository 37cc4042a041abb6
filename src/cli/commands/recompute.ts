import type { Command } from 'commander';
import { lazyAction, withConfigOption } from '../define.ts';

export function registerRecompute(program: Command): void {
  withConfigOption(
    program
      .command('recompute')
      .description('recomputes risk, limits and alerts; without --from the whole history (a full backfill)')
      .option('--from <date>', 'recompute from this date on (YYYY-MM-DD); earlier rows stay as they are')
      .option('--portfolio <id>', 'only this portfolio (repeat for several)', (id: string, ids: string[]) => [...ids, id], [] as string[])
      .option('--strict', 'exit non-zero when a portfolio could not be computed (for scheduled scripts)'),
  ).action(lazyAction(async () => (await import('../actions/recompute.ts')).runRecomputeCommand));
}
