import type { Command } from 'commander';
import { readStatus, type StatusSection } from '../../read/readStatus.ts';
import { openForReading } from '../../storage/workspace.ts';
import { configFrom, withConfigOption } from '../context.ts';
import { formatResult, noteReadCopy, parseFormat, toObjects, writeResult, type OutputFormat } from '../format.ts';
import { jsonForTerminal } from '../terminalText.ts';

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
      writeResult(render(sections, format, handle.source), format);
    } finally {
      handle.db.close();
    }
  });
}

function render(sections: StatusSection[], format: OutputFormat, source: string): string {
  if (format === 'json') {
    const body = Object.fromEntries(
      sections.map((s) => [s.key, { total: s.total, rows: toObjects(s.result), ...(s.note ? { note: s.note } : {}) }]),
    );
    return `${jsonForTerminal(JSON.stringify({ source, ...body }, null, 2))}\n`;
  }
  return sections
    .map((s) => {
      const more = s.total > s.result.rows.length ? ` (latest ${s.result.rows.length} of ${s.total})` : '';
      const heading = format === 'csv' ? `# ${s.title}${more}` : `== ${s.title}${more}`;
      if (s.note) return `${heading}\n${s.note}\n`;
      if (s.total === 0) return `${heading}\nnone\n`;
      return `${heading}\n${formatResult(s.result, format)}`;
    })
    .join('\n');
}
