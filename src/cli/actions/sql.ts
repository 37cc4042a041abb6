import { runReadOnlyQuery } from '../../read/readQuery.ts';
import { openForReading } from '../../storage/workspace.ts';
import { readerConfigFrom } from '../commandConfig.ts';
import { formatResult, noteReadCopy, parseFormat, writeResult } from '../format.ts';

/** `riskfold sql QUERY`. */
export async function runSql(query: string, opts: { config?: string; format: string; readFiles: string[] }): Promise<void> {
  const format = parseFormat(opts.format);
  const config = await readerConfigFrom(opts);
  const handle = await openForReading(config, opts.readFiles);
  try {
    noteReadCopy(handle, config);
    const result = await runReadOnlyQuery(handle.db, query);
    writeResult(formatResult(result, format), format);
  } finally {
    handle.db.close();
  }
}
