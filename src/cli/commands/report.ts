import type { Command } from 'commander';
import { RiskfoldError } from '../../errors.ts';
import { writeFirmReport, writeReport } from '../../report/writeReport.ts';
import { configFrom, withConfigOption } from '../context.ts';

export function registerReport(program: Command): void {
  withConfigOption(
    program
      .command('report')
      .description("writes a self-contained HTML page of one portfolio's risk (charts, limit episodes, data quality), or with --all the firm-wide overview")
      .option('--portfolio <id>', 'portfolio id, as in the positions files')
      .option('--all', "every portfolio against its limits, open episodes and data problems, linking to each portfolio's page (written beside it)")
      .option('--out <file>', 'output file (default: report-<portfolio>-<as of date>.html, or report-all-<as of date>.html, in the current folder)'),
  ).action(async (opts: { config?: string; portfolio?: string; all?: boolean; out?: string }) => {
    if (Boolean(opts.all) === (opts.portfolio !== undefined)) {
      throw new RiskfoldError('usage', 'report needs either --portfolio <id> or --all');
    }
    const config = configFrom(opts);
    if (opts.all) {
      const written = await writeFirmReport(config, { out: opts.out });
      const note = written.source === 'read_copy' ? " (from the worker's published read copy)" : '';
      process.stdout.write(`overview of ${written.pages.length} portfolio pages as of ${written.asOf} written to ${written.file}${note}\n`);
      return;
    }
    const written = await writeReport(config, { portfolio: opts.portfolio!, out: opts.out });
    const note = written.source === 'read_copy' ? " (from the worker's published read copy)" : '';
    process.stdout.write(`report of ${opts.portfolio} as of ${written.asOf} written to ${written.file}${note}\n`);
  });
}
