import type { Command } from 'commander';
import { loadConfig } from '../../config/load.ts';
import { runReadOnlyQuery } from '../../read/readQuery.ts';
import { openForReading } from '../../storage/workspace.ts';
import { withConfigOption } from '../context.ts';
import { formatResult, noteReadCopy, parseFormat } from '../format.ts';

export function registerSql(program: Command): void {
  withConfigOption(
    program
      .command('sql')
      .description('runs a read-only query on the history (the published read copy while the worker runs)')
      .argument('<query>', 'one SQL statement that only reads, e.g. "select * from risk_daily limit 5"')
      .option('--format <format>', 'table, csv (header row) or json; csv and json keep full precision', 'table'),
  ).action(async (query: string, opts: { config: string; format: string }) => {
    const format = parseFormat(opts.format);
    const config = loadConfig(opts.config);
    const handle = await openForReading(config);
    try {
      noteReadCopy(handle, config);
      const result = await runReadOnlyQuery(handle.db, query);
      process.stdout.write(formatResult(result, format));
    } finally {
      handle.db.close();
    }
  });
}
