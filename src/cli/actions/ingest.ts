import { lstatSync } from 'node:fs';
import path from 'node:path';
import { formatRejection, RiskfoldError } from '../../errors.ts';
import { recoverAtStart } from '../../ingest/recovery.ts';
import { companionSuffixes } from '../../ingest/completeness.ts';
import type { IngestOutcome } from '../../ingest/ingestFile.ts';
import { runBatch } from '../../batch/runBatch.ts';
import { describeChange } from '../../batch/runSettings.ts';
import { openWorkspace } from '../../storage/workspace.ts';
import { listInbox } from '../../watch/inboxFiles.ts';
import { contextFrom } from '../context.ts';
import { forTerminal } from '../terminalText.ts';
import { describeRun } from './recompute.ts';
import { strictFailure } from '../strict.ts';

/**
 * `riskfold ingest [FILE...]`: the given files or the inbox, through the same batch as
 * the worker (applied securities, fx, prices, then positions, by arrival within a kind): ingest each, one recompute, limits,
 * alerts, read copy. A rejected or held file, or a portfolio the run could not compute, is data,
 * not a failure: it is printed and the exit code stays 0 (non-zero with --strict, after
 * every file has had its turn); a missing file, a locked database or a failed recompute
 * exit non-zero.
 */
export async function runIngest(files: string[], opts: { config?: string; strict?: boolean }): Promise<void> {
  const { config, log } = contextFrom(opts);
  const given = files.map((f) => path.resolve(f));
  given.forEach(requirePlainFile);
  const db = await openWorkspace(config, log);
  try {
    await recoverAtStart(db, config, log);
    const batch = given.length > 0 ? given : listInbox(config.inbox, companionSuffixes(config));
    if (batch.length === 0) process.stdout.write(`no files in ${path.relative(process.cwd(), config.inbox) || '.'}\n`);
    const summary = await runBatch(db, config, log, batch, { deliver: true, onFile: (o) => process.stdout.write(`${describeOutcome(o)}\n`) });
    for (const skipped of summary.skipped) process.stdout.write(`skipped    ${path.basename(skipped)}: gone before its turn\n`);
    const rejected = summary.files.filter((f) => f.status === 'rejected').length;
    if (rejected > 0) process.stdout.write(`${rejected} file${rejected === 1 ? '' : 's'} rejected: see the reason files in ${shown(config.quarantine)}\n`);
    for (const change of summary.settingChanges) process.stdout.write(`${describeChange(change)}\n`);
    if (summary.run) process.stdout.write(`${describeRun(summary.run)}\n`);
    if (summary.idle) process.stdout.write(`${summary.idle}\n`);
    if (summary.readCopyBehind !== null) process.stdout.write(`${summary.readCopyBehind}\n`);
    if (summary.runError !== null) throw new Error(`the files are loaded but the recompute failed: ${summary.runError}`);
    const held = summary.files.filter((f) => f.status === 'held').length;
    const failure = opts.strict ? strictFailure({ rejected, held, of: summary.files.length }, summary.run) : null;
    if (failure) throw failure;
  } finally {
    db.close();
  }
}

function requirePlainFile(file: string): void {
  let isFile = false;
  try {
    isFile = lstatSync(file).isFile();
  } catch {
    throw new RiskfoldError('not_found', `${file}: no such file`);
  }
  if (!isFile) throw new RiskfoldError('usage', `${file}: not a regular file (folders and symlinks are not ingested)`);
}

/** One line per file: status, name, rows or reason, and where the file went. */
export function describeOutcome(o: IngestOutcome): string {
  const what =
    o.status === 'ingested'
      ? `${o.name}: ${o.rows.toLocaleString('en-US')} row${o.rows === 1 ? '' : 's'} of ${o.kind}${neverPricedNote(o.neverPriced)}`
      : o.status === 'duplicate'
        ? `${o.name}: same bytes as file ${o.duplicateOf}, nothing added`
        : o.status === 'held'
          ? `${o.name}: ${o.hold!.reason}`
          : formatRejection(o.rejection!); // starts with the file name
  return forTerminal(`${o.status.padEnd(10)} ${what} ${o.status === 'held' ? 'stays in' : '->'} ${shown(o.movedTo)}`);
}

/** "; never priced: EQ-X, EQ-Y (no value until a price arrives)" */
function neverPricedNote(ids: string[] | undefined): string {
  if (ids === undefined || ids.length === 0) return '';
  const listed = ids.length > 5 ? `${ids.slice(0, 5).join(', ')} and ${ids.length - 5} more` : ids.join(', ');
  return `; never priced: ${listed} (their portfolios have no value until a price arrives)`;
}

function shown(p: string): string {
  const rel = path.relative(process.cwd(), p);
  return rel.startsWith('..') ? p : rel;
}
