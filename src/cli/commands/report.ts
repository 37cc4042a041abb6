import type { Command } from 'commander';
import { lazyAction, withConfigOption } from '../define.ts';

export function registerReport(program: Command): void {
  withConfigOption(
    program
      .command('report')
      .description("writes a self-contained HTML page of one portfolio's risk (charts, limit episodes, data quality), or with --all the firm-wide overview")
      .option('--portfolio <id>', 'portfolio id, as in the positions files')
      .option('--all', "every portfolio against its limits, open episodes and data problems, linking to each portfolio's page (written beside it)")
      .option('--out <file>', 'output file (default: report-<portfolio>-<as of date>.html, or report-all-<as of date>.html, in the current folder)'),
  ).action(lazyAction(async () => (await import('../actions/report.ts')).runReport));
}
