import type { Command } from 'commander';
import { loadConfig } from '../../config/load.ts';
import { readStatus, type StatusSection } from '../../read/readStatus.ts';
import { openForReading } from '../../storage/workspace.ts';
import { withConfigOption } from '../context.ts';
import { formatResult, noteReadCopy, parseFormat, toObjects, type OutputFormat } from '../format.ts';

export function registerStatus(program: Command): void {
  withConfigOption(
    program
      .command('status')
      .description('last files, last run, open breaches, undelivered alerts and stale data')
      .option('--format <format>', 'table, csv or json', 'table'),
  ).action(async (opts: { config: string; format: string }) => {
    const format = parseFormat(opts.format);
    const config = loadConfig(opts.config);
    const handle = await openForReading(config);
    try {
      noteReadCopy(handle, config);
      const sections = await readStatus(handle.db);
      process.stdout.write(render(sections, format, handle.source));
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
    return `${JSON.stringify({ source, ...body }, null, 2)}\n`;
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
