import { readStatus } from '../../read/readStatus.ts';
import { openForReading } from '../../storage/workspace.ts';
import { readerConfigFrom } from '../commandConfig.ts';
import { formatSections, noteReadCopy, parseFormat, writeResult } from '../format.ts';

/** `riskfold status`. */
export async function runStatus(opts: { config?: string; format: string; portfolio?: string; details?: boolean }): Promise<void> {
  const format = parseFormat(opts.format);
  const config = await readerConfigFrom(opts);
  const handle = await openForReading(config);
  try {
    noteReadCopy(handle, config);
    const sections = await readStatus(handle.db, config, { portfolio: opts.portfolio ?? null, details: opts.details === true, now: new Date() });
    writeResult(formatSections(sections, format, handle.source), format);
  } finally {
    handle.db.close();
  }
}
