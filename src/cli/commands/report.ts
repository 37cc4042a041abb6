import type { Command } from 'commander';
import { writeReport } from '../../report/writeReport.ts';
import { configFrom, withConfigOption } from '../context.ts';

export function registerReport(program: Command): void {
  withConfigOption(
    program
      .command('report')
      .description('writes a self-contained HTML page of one portfolio\'s risk: charts, limit episodes, data quality')
      .requiredOption('--portfolio <id>', 'portfolio id, as in the positions files')
      .option('--out <file>', 'output file (default: report-<portfolio>-<as of date>.html in the current folder)'),
  ).action(async (opts: { config?: string; portfolio: string; out?: string }) => {
    const config = configFrom(opts);
    const written = await writeReport(config, { portfolio: opts.portfolio, out: opts.out });
    const note = written.source === 'read_copy' ? ' (from the worker\'s published read copy)' : '';
    process.stdout.write(`report of ${opts.portfolio} as of ${written.asOf} written to ${written.file}${note}\n`);
  });
}
