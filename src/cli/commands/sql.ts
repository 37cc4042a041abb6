import type { Command } from 'commander';
import { lazyAction, withConfigOption } from '../define.ts';

export function registerSql(program: Command): void {
  withConfigOption(
    program
      .command('sql')
      .description('runs a read-only query on the history (the published read copy while the worker runs)')
      .argument('<query>', 'one SQL statement that only reads, e.g. "select * from risk_daily limit 5"')
      .option('--format <format>', 'table, csv (header row) or json; csv and json keep full precision', 'table')
      .option(
        '--read-files <dir>',
        'also let the query read files under DIR (read_csv, glob, ...); without it only the database is readable (repeat for several)',
        (dir: string, dirs: string[]) => [...dirs, dir],
        [] as string[],
      ),
  ).action(lazyAction(async () => (await import('../actions/sql.ts')).runSql));
}
