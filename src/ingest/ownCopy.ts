import { lstatSync } from 'node:fs';
import type { Database } from '../storage/database.ts';
import { sameInode, statOrNull } from '../storage/fileIdentity.ts';
import type { HoldReason } from './completeness.ts';

/**
 * Why a delivery must not be read at all, or null. A hard link shares its bytes with a
 * name elsewhere (a system file, another user's data): reading it would carry that
 * file's words into the ledger and the log, and moving it would take the other owner's
 * file into archive/. Our own move makes a second link for a moment (archive/ or
 * quarantine/ first, then the inbox name goes); a kill in between leaves one behind,
 * recognised by its ledger row. Nothing here opens the file.
 */
export async function refusalOf(db: Database, filePath: string, name: string): Promise<HoldReason | null> {
  const stat = lstatSync(filePath);
  if (!stat.isFile()) {
    return { code: 'not_regular_file', reason: 'not a regular file (a symlink, folder or device): not read; deliver the file itself' };
  }
  if (stat.nlink <= 1 || (await linkedByOwnMove(db, name, stat))) return null;
  return {
    code: 'hard_link',
    reason: `a hard link (${stat.nlink} names for one file, the others outside the inbox): not read; deliver a copy of its own`,
  };
}

/** The second name is this delivery's recorded place in archive/ or quarantine/: a move a kill interrupted. */
async function linkedByOwnMove(db: Database, name: string, stat: { dev: number; ino: number }): Promise<boolean> {
  const rows = await db.all<{ archived_path: string }>('select archived_path from ingested_files where name = $1', [name]);
  return rows.some((r) => {
    const there = statOrNull(r.archived_path);
    return there !== null && sameInode(there, stat);
  });
}
