import type { Command } from 'commander';
import { requireIsoDate } from '../../batch/runRecompute.ts';
import { RiskfoldError } from '../../errors.ts';
import { readExplanation } from '../../read/explainFigure.ts';
import { openForReading } from '../../storage/workspace.ts';
import { configFrom, withConfigOption } from '../context.ts';
import { formatSections, noteReadCopy, parseFormat, writeResult } from '../format.ts';

interface ExplainOptions {
  config?: string;
  portfolio: string;
  date: string;
  window?: string;
  format: string;
}

/** `riskfold explain --portfolio P --date D [--window W]`: where a figure came from and which runs made and replaced it. */
export function registerExplain(program: Command): void {
  withConfigOption(
    program
      .command('explain')
      .description('one portfolio\'s figure on one date: what went into it, the files behind it, and the runs that made and replaced it')
      .requiredOption('--portfolio <id>', 'portfolio id, as in the positions files')
      .requiredOption('--date <date>', 'valuation date (YYYY-MM-DD)')
      .option('--window <days>', 'only this window in trading days (0 = ewma); default every window')
      .option('--format <format>', 'table (percentages), csv or json (full precision)', 'table'),
  ).action(async (opts: ExplainOptions) => {
    requireIsoDate(opts.date, 'date');
    const window = opts.window === undefined ? null : windowOf(opts.window);
    const format = parseFormat(opts.format);
    const config = configFrom(opts);
    const handle = await openForReading(config);
    try {
      noteReadCopy(handle, config);
      const sections = await readExplanation(handle.db, { portfolio: opts.portfolio, date: opts.date, window });
      writeResult(formatSections(sections, format, handle.source), format);
    } finally {
      handle.db.close();
    }
  });
}

function windowOf(text: string): number {
  if (!/^\d+$/.test(text)) throw new RiskfoldError('usage', `--window "${text}" is not a number of trading days (e.g. 63, or 0 for ewma)`);
  return Number(text);
}
