import { statSync, unlinkSync } from 'node:fs';
import path from 'node:path';
import type { Database } from '../storage/database.ts';
import { sameInode, statOrNull } from '../storage/fileIdentity.ts';
import { moveWithoutOverwrite } from './moves.ts';

/**
 * The ledger row is written before a file leaves the inbox, so a kill in between leaves
 * a row whose file is still here. This finds such a row for the same name and bytes:
 * its recorded place is empty, or holds this very file (the link was made, the unlink
 * lost). Null for a genuine new delivery.
 */
export async function unfinishedMove(
  db: Database,
  filePath: string,
  name: string,
  sha256: string,
  status: 'ingested' | 'duplicate' | 'rejected',
): Promise<{ fileId: number; archivedPath: string } | null> {
  const [row] = await db.all<{ file_id: number; archived_path: string }>(
    `select file_id, archived_path from ingested_files where name = $1 and sha256 = $2 and status = $3 order by file_id desc limit 1`,
    [name, sha256, status],
  );
  if (!row) return null;
  const here = path.resolve(filePath);
  if (here === row.archived_path) return null;
  const there = statOrNull(row.archived_path);
  return there === null || sameInode(there, statSync(here)) ? { fileId: row.file_id, archivedPath: row.archived_path } : null;
}

/** Completes the move to `target`; returns where the file ended up (a suffix if `target` was taken meanwhile). */
export function finishMove(filePath: string, target: string): string {
  const there = statOrNull(target);
  if (there !== null && sameInode(there, statSync(filePath))) {
    unlinkSync(filePath);
    return target;
  }
  return moveWithoutOverwrite(filePath, path.dirname(target), path.basename(target));
}
