import { lstatSync } from 'node:fs';
import path from 'node:path';
import type { Database } from '../storage/database.ts';
import type { HoldReason } from './completeness.ts';

/** The digest of a delivery refused unread (a hard link, not a regular file): its bytes are never read. */
export const UNREAD = '';

export interface HeldDelivery {
  name: string;
  sha256: string;
  /** The file's mtime in ms: the same bytes delivered again carry a new one. */
  mtimeMs: number;
  hold: HoldReason;
}

/**
 * Records that these bytes under this name are held. True when this is news (a new hold,
 * to be reported); false when the same bytes were already held and are still.
 */
export async function recordHold(db: Database, d: HeldDelivery): Promise<boolean> {
  const known = await db.all('select 1 from held_files where name = $1 and sha256 = $2 and released_at is null', [d.name, d.sha256]);
  if (known.length > 0) return false;
  await db.run(
    `insert or replace into held_files (name, sha256, code, reason, file_mtime, held_at, released_at)
     values ($1, $2, $3, $4, $5, now(), null)`,
    [d.name, d.sha256, d.hold.code, d.hold.reason, d.mtimeMs],
  );
  return true;
}

/** A delivery of this name left the inbox (ingested or rejected): its holds are over. */
export async function releaseHolds(db: Database, name: string): Promise<void> {
  await db.run('update held_files set released_at = now() where name = $1 and released_at is null', [name]);
}

/**
 * Holds of deliveries no longer in the inbox (taken away or renamed by someone else: our
 * own moves release theirs) are over. Returns the names released.
 */
export async function releaseVanished(db: Database, inbox: string): Promise<string[]> {
  const open = await db.all<{ name: string }>('select distinct name from held_files where released_at is null order by name');
  const gone = open.map((r) => r.name).filter((name) => !presentAt(path.join(inbox, name)));
  for (const name of gone) await releaseHolds(db, name);
  return gone;
}

/** lstat, not exists: a dangling symlink left in the inbox is still there. */
function presentAt(file: string): boolean {
  try {
    lstatSync(file);
    return true;
  } catch {
    return false;
  }
}

/**
 * The sender confirms a held snapshot by delivering the same bytes again: the held row
 * exists for these bytes and the file now carries another mtime than when it was held.
 */
export async function redeliveredAfterHold(db: Database, name: string, sha256: string, mtimeMs: number): Promise<boolean> {
  const rows = await db.all(
    `select 1 from held_files where name = $1 and sha256 = $2 and released_at is null and code = 'snapshot_drop' and file_mtime <> $3`,
    [name, sha256, mtimeMs],
  );
  return rows.length > 0;
}
