import { requireIsoDate } from '../../batch/runRecompute.ts';
import { RiskfoldError } from '../../errors.ts';
import { readExplanation } from '../../read/explainFigure.ts';
import { openForReading } from '../../storage/workspace.ts';
import { readerConfigFrom } from '../commandConfig.ts';
import { formatSections, noteReadCopy, parseFormat, writeResult } from '../format.ts';

interface ExplainOptions {
  config?: string;
  portfolio: string;
  date: string;
  window?: string;
  format: string;
}

/** `riskfold explain`. */
export async function runExplain(opts: ExplainOptions): Promise<void> {
  requireIsoDate(opts.date, 'date');
  const window = opts.window === undefined ? null : windowOf(opts.window);
  const format = parseFormat(opts.format);
  const config = await readerConfigFrom(opts);
  const handle = await openForReading(config);
  try {
    noteReadCopy(handle, config);
    const sections = await readExplanation(handle.db, { portfolio: opts.portfolio, date: opts.date, window });
    writeResult(formatSections(sections, format, handle.source), format);
  } finally {
    handle.db.close();
  }
}

function windowOf(text: string): number {
  if (!/^\d+$/.test(text)) throw new RiskfoldError('usage', `--window "${text}" is not a number of trading days (e.g. 63, or 0 for ewma)`);
  return Number(text);
}
