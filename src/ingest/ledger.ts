import type { FileKind } from '../config/schema.ts';
import type { Database } from '../storage/database.ts';
import { resolveByRedelivery } from './archiveAudit.ts';

/** One `ingested_files` row as this stage writes it. */
export interface FileRecord {
  /** Taken from file_id_seq beforehand when the raw rows are inserted first; else the default. */
  fileId?: number;
  name: string;
  sha256: string;
  kind: FileKind | null;
  source: string | null;
  rows: number;
  status: 'ingested' | 'duplicate' | 'rejected';
  error: string | null;
  receivedAt: Date;
  archivedPath: string;
  minDate: string | null;
  maxDate: string | null;
  duplicateOf: number | null;
}

/** Inserts the row and returns its file_id; a loaded or duplicate delivery closes the archive findings it answers. */
export async function recordFile(db: Database, r: FileRecord): Promise<number> {
  const [row] = await db.all<{ file_id: number }>(
    `insert into ingested_files
       (file_id, name, sha256, kind, source, rows, status, error, received_at, archived_path, min_date, max_date, duplicate_of)
     values (${r.fileId === undefined ? `nextval('file_id_seq')` : '$13'}, $1, $2, $3, $4, $5, $6, $7, $8::timestamptz, $9, $10::date, $11::date, $12)
     returning file_id`,
    [
      r.name,
      r.sha256,
      r.kind,
      r.source,
      r.rows,
      r.status,
      r.error,
      r.receivedAt.toISOString(),
      r.archivedPath,
      r.minDate,
      r.maxDate,
      r.duplicateOf,
      ...(r.fileId === undefined ? [] : [r.fileId]),
    ],
  );
  if (r.status !== 'rejected') await resolveByRedelivery(db, row.file_id);
  return row.file_id;
}

export interface EarlierDelivery {
  fileId: number;
  name: string;
  kind: FileKind;
  rows: number;
  archivedPath: string;
  minDate: string | null;
}

/** The first file that delivered these bytes and was loaded, if any. */
export async function findIngested(db: Database, sha256: string): Promise<EarlierDelivery | null> {
  const [row] = await db.all<{ file_id: number; name: string; kind: FileKind; rows: string; archived_path: string; min_date: string | null }>(
    `select file_id, name, kind, rows, archived_path, min_date from ingested_files
     where sha256 = $1 and status = 'ingested' order by file_id limit 1`,
    [sha256],
  );
  if (!row) return null;
  return { fileId: row.file_id, name: row.name, kind: row.kind, rows: Number(row.rows), archivedPath: row.archived_path, minDate: row.min_date };
}

/** Where the move after commit put the file, when that differs from the planned path. */
export async function updateArchivedPath(db: Database, fileId: number, archivedPath: string): Promise<void> {
  await db.run('update ingested_files set archived_path = $1 where file_id = $2', [archivedPath, fileId]);
}

/** The portfolios a loaded positions file carried. */
export async function portfoliosOf(db: Database, fileId: number): Promise<string[]> {
  const rows = await db.all<{ portfolio_id: string }>(
    'select distinct portfolio_id from positions where file_id = $1 order by portfolio_id',
    [fileId],
  );
  return rows.map((r) => r.portfolio_id);
}
