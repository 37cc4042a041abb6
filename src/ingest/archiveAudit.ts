import { existsSync } from 'node:fs';
import type { Logger } from 'pino';
import type { Database } from '../storage/database.ts';
import { sha256OfFile } from './fingerprint.ts';

export interface ArchiveFinding {
  fileId: number;
  archivedPath: string;
  finding: 'changed' | 'missing';
}

/**
 * Re-hashes every archived delivery against the sha256 recorded when it was ingested: a
 * sender that kept writing into a file after it was taken (the rest of a half-written
 * file) changes bytes the database no longer matches. Each finding is recorded once in
 * `archive_findings` and logged as an error; returns the new ones.
 */
export async function auditArchive(db: Database, log: Logger): Promise<ArchiveFinding[]> {
  const alog = log.child({ stage: 'ingest' });
  const files = await db.all<{ file_id: number; archived_path: string; sha256: string }>(
    `select f.file_id, f.archived_path, f.sha256 from ingested_files f
     where f.status in ('ingested', 'duplicate') and f.archived_path is not null
       and not exists (select 1 from archive_findings a where a.file_id = f.file_id)
     order by f.file_id`,
  );
  const found: ArchiveFinding[] = [];
  for (const f of files) {
    const finding = !existsSync(f.archived_path) ? 'missing' : (await sha256OfFile(f.archived_path)) !== f.sha256 ? 'changed' : null;
    if (finding === null) continue;
    await db.run('insert into archive_findings (file_id, archived_path, finding) values ($1, $2, $3)', [f.file_id, f.archived_path, finding]);
    found.push({ fileId: f.file_id, archivedPath: f.archived_path, finding });
    alog.error(
      { fileId: f.file_id, archivedPath: f.archived_path, finding },
      finding === 'changed'
        ? 'an archived file no longer matches the bytes that were loaded (written to after it was taken?)'
        : 'an archived file is missing',
    );
  }
  return found;
}
