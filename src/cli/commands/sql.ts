import type { Command } from 'commander';
import { runReadOnlyQuery } from '../../read/readQuery.ts';
import { openForReading } from '../../storage/workspace.ts';
import { configFrom, withConfigOption } from '../context.ts';
import { formatResult, noteReadCopy, parseFormat, writeResult } from '../format.ts';

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
  ).action(async (query: string, opts: { config?: string; format: string; readFiles: string[] }) => {
    const format = parseFormat(opts.format);
    const config = configFrom(opts);
    const handle = await openForReading(config, opts.readFiles);
    try {
      noteReadCopy(handle, config);
      const result = await runReadOnlyQuery(handle.db, query);
      writeResult(formatResult(result, format), format);
    } finally {
      handle.db.close();
    }
  });
}
