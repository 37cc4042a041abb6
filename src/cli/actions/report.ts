import { RiskfoldError } from '../../errors.ts';
import { writeFirmReport, writeReport } from '../../report/writeReport.ts';
import { readerConfigFrom } from '../commandConfig.ts';

/** `riskfold report --portfolio ID` or `--all`. */
export async function runReport(opts: { config?: string; portfolio?: string; all?: boolean; out?: string }): Promise<void> {
  if (Boolean(opts.all) === (opts.portfolio !== undefined)) {
    throw new RiskfoldError('usage', 'report needs either --portfolio <id> or --all');
  }
  const config = await readerConfigFrom(opts);
  if (opts.all) {
    const written = await writeFirmReport(config, { out: opts.out });
    const note = written.source === 'read_copy' ? " (from the worker's published read copy)" : '';
    process.stdout.write(`overview of ${written.pages.length} portfolio pages as of ${written.asOf} written to ${written.file}${note}\n`);
    return;
  }
  const written = await writeReport(config, { portfolio: opts.portfolio!, out: opts.out });
  const note = written.source === 'read_copy' ? " (from the worker's published read copy)" : '';
  process.stdout.write(`report of ${opts.portfolio} as of ${written.asOf} written to ${written.file}${note}\n`);
}
