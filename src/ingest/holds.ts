import type { Database } from '../storage/database.ts';
import type { HoldReason } from './completeness.ts';

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
