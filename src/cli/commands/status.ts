import type { Command } from 'commander';
import { readStatus } from '../../read/readStatus.ts';
import { openForReading } from '../../storage/workspace.ts';
import { configFrom, withConfigOption } from '../context.ts';
import { formatSections, noteReadCopy, parseFormat, writeResult } from '../format.ts';

export function registerStatus(program: Command): void {
  withConfigOption(
    program
      .command('status')
      .description('each portfolio against its limits, the day\'s files, the last run, undelivered alerts and data problems')
      .option('--format <format>', 'table (percentages), csv or json (full precision)', 'table')
      .option('--portfolio <id>', 'only this portfolio')
      .option('--details', 'also list the files, open breaches, alerts and data problems row by row'),
  ).action(async (opts: { config?: string; format: string; portfolio?: string; details?: boolean }) => {
    const format = parseFormat(opts.format);
    const config = configFrom(opts);
    const handle = await openForReading(config);
    try {
      noteReadCopy(handle, config);
      const sections = await readStatus(handle.db, config, { portfolio: opts.portfolio ?? null, details: opts.details === true, now: new Date() });
      writeResult(formatSections(sections, format, handle.source), format);
    } finally {
      handle.db.close();
    }
  });
}
