import type { Logger } from 'pino';
import type { Config } from '../config/load.ts';
import type { Database } from '../storage/database.ts';
import { removeStaleReadCopies } from '../storage/staleCopies.ts';
import { auditArchive } from './archiveAudit.ts';
import { releaseVanished } from './holds.ts';

/**
 * What the owner of the database does before taking files: clear what a kill left
 * behind (temporary read copies), end the holds of files no longer in the inbox, and
 * check that the archive still holds the bytes the ledger recorded (the files archived
 * or touched since the last audit). Files a kill left in the inbox need nothing here:
 * their ledger rows were written first, and ingesting them again finishes their moves.
 */
export async function recoverAtStart(db: Database, config: Config, log: Logger): Promise<void> {
  removeStaleReadCopies(config, log);
  await releaseVanished(db, config.inbox);
  await auditArchive(db, log, { full: false, acknowledged: config.ingest.acknowledgedArchiveFiles });
}
