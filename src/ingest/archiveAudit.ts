import type { Logger } from 'pino';
import type { Database } from '../storage/database.ts';
import { statOrNull } from '../storage/fileIdentity.ts';
import { sha256OfFile } from './fingerprint.ts';

export interface ArchiveFinding {
  fileId: number;
  archivedPath: string;
  finding: 'changed' | 'missing';
}

export interface AuditOutcome {
  /** Findings opened (or, for a file already open, changed in kind) by this audit. */
  found: ArchiveFinding[];
  /** Files whose open finding this audit closed: their bytes match again, or the config acknowledges them. */
  resolved: number[];
  /** Files read and hashed; the rest kept the size and mtime they had when last hashed (acknowledged ones are not counted). */
  hashed: number;
  skipped: number;
}

interface Archived {
  file_id: number;
  archived_path: string;
  sha256: string;
  seen_size: number | null;
  seen_mtime: number | null;
  seen_sha256: string | null;
  known: boolean;
  open_finding: string | null;
}

/**
 * Checks that the archive still holds the bytes the ledger recorded: a sender that kept
 * writing into a file after it was taken (the rest of a half-written file) changes bytes
 * the database no longer matches. Incremental unless `full`: a file whose size and mtime
 * are those it had when last hashed is not read again (a scheduled full audit catches a
 * change that kept both). A new finding is recorded in `archive_findings` and logged as
 * an error once; a file whose bytes match again closes its finding (`restored`). A
 * file_id in `acknowledged` (the config's `ingest.acknowledgedArchiveFiles`) is one whose
 * archived copy operations no longer vouch for: its finding closes and it is not read.
 */
export async function auditArchive(db: Database, log: Logger, options: { full: boolean; acknowledged: readonly number[] }): Promise<AuditOutcome> {
  const alog = log.child({ stage: 'ingest' });
  const outcome: AuditOutcome = { found: [], resolved: [], hashed: 0, skipped: 0 };
  for (const id of options.acknowledged) {
    if (await resolve(db, id, 'acknowledged')) outcome.resolved.push(id);
  }
  const files = await db.all<Archived>(
    `select f.file_id, f.archived_path, f.sha256, s.size::double as seen_size, s.mtime_ms as seen_mtime, s.sha256 as seen_sha256,
            s.file_id is not null as known, o.finding as open_finding
     from ingested_files f
     left join archive_audits s on s.file_id = f.file_id
     left join archive_findings o on o.file_id = f.file_id and o.resolved_at is null
     where f.status in ('ingested', 'duplicate') and f.archived_path is not null
     order by f.file_id`,
  );
  for (const f of files.filter((file) => !options.acknowledged.includes(file.file_id))) {
    const stat = statOrNull(f.archived_path);
    const size = stat?.size ?? null;
    const mtime = stat?.mtimeMs ?? null;
    if (!options.full && f.known && size === f.seen_size && mtime === f.seen_mtime) {
      outcome.skipped++;
      continue;
    }
    // the stat is taken before the read: bytes written during it move the mtime, so the next audit reads them
    const seen = stat === null ? null : await sha256OfFile(f.archived_path);
    if (seen !== null) outcome.hashed++;
    await db.run(
      `insert or replace into archive_audits (file_id, size, mtime_ms, sha256, checked_at) values ($1, $2, $3, $4, now())`,
      [f.file_id, size, mtime, seen],
    );
    if (seen === f.sha256) {
      if (await resolve(db, f.file_id, 'restored')) {
        outcome.resolved.push(f.file_id);
        alog.info({ fileId: f.file_id, archivedPath: f.archived_path }, 'an archived file holds the bytes that were loaded again: its finding is closed');
      }
      continue;
    }
    const finding = seen === null ? 'missing' : 'changed';
    // the same wrong bytes as last time were reported then (and may since have been acknowledged)
    if ((f.known && seen === f.seen_sha256) || f.open_finding === finding) continue;
    if (f.open_finding === null) {
      await db.run('insert into archive_findings (file_id, archived_path, finding) values ($1, $2, $3)', [f.file_id, f.archived_path, finding]);
    } else {
      await db.run('update archive_findings set finding = $2, found_at = now() where file_id = $1 and resolved_at is null', [f.file_id, finding]);
    }
    outcome.found.push({ fileId: f.file_id, archivedPath: f.archived_path, finding });
    alog.error(
      { fileId: f.file_id, archivedPath: f.archived_path, finding },
      finding === 'changed'
        ? 'an archived file no longer matches the bytes that were loaded (written to after it was taken?)'
        : 'an archived file is missing',
    );
  }
  alog.info({ full: options.full, hashed: outcome.hashed, skipped: outcome.skipped, found: outcome.found.length, resolved: outcome.resolved.length }, 'archive audit done');
  return outcome;
}

/** Closes the open finding of a file; true when there was one. */
async function resolve(db: Database, fileId: number, resolution: string): Promise<boolean> {
  const rows = await db.all(
    'update archive_findings set resolved_at = now(), resolution = $2 where file_id = $1 and resolved_at is null returning file_id',
    [fileId, resolution],
  );
  return rows.length > 0;
}

/**
 * A delivery just recorded as ingested or duplicate (`fileId`) brings back what an
 * archived file of the same name, or the file whose bytes it repeats, lost: their open
 * findings close. Called in the transaction that records it.
 */
export async function resolveByRedelivery(db: Database, fileId: number): Promise<void> {
  await db.run(
    `update archive_findings set resolved_at = now(), resolution = 'redelivered by file ' || $1
     where resolved_at is null and file_id in (
       select e.file_id from ingested_files n join ingested_files e on e.file_id <> n.file_id and (e.name = n.name or e.file_id = n.duplicate_of)
       where n.file_id = $1 and n.status in ('ingested', 'duplicate'))`,
    [fileId],
  );
}
