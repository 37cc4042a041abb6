import { lstatSync } from 'node:fs';
import type { Logger } from 'pino';
import { insertAlert } from '../alerts/outbox.ts';
import type { FileKind } from '../config/schema.ts';
import type { Database } from '../storage/database.ts';
import type { HoldReason } from './completeness.ts';
import type { IngestOutcome } from './ingestFile.ts';
import { recordHold } from './holds.ts';

/**
 * Leaves the file in the inbox and records why: a new hold is a warning in the log (and,
 * for a suspect snapshot, an alert to operations); the same bytes held again stay quiet.
 * A change of the file (the rest of it written, a marker dropped) brings it back.
 */
export async function holdFile(
  db: Database,
  flog: Logger,
  filePath: string,
  delivery: { name: string; kind: FileKind | null; sha256: string },
  hold: HoldReason,
): Promise<IngestOutcome> {
  const { name, kind, sha256 } = delivery;
  const news = await recordHold(db, { name, sha256, mtimeMs: lstatSync(filePath).mtimeMs, hold });
  if (news) {
    flog.warn({ code: hold.code, reason: hold.reason, sha256 }, 'file held in the inbox');
    if (hold.code === 'snapshot_drop') {
      await insertAlert(db, {
        alertId: `file-held-${name}-${sha256.slice(0, 16)}`,
        kind: 'file_held',
        portfolioId: null,
        asOf: null,
        payload: { level: 'held', episode_state: 'open', file: name, code: hold.code, text: `${name} held: ${hold.reason}` },
      });
    }
  } else {
    flog.debug({ code: hold.code }, 'file still held');
  }
  return { status: 'held', fileId: null, name, kind, rows: 0, minDate: null, portfolios: null, movedTo: filePath, hold };
}
