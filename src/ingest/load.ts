import type { Database } from '../storage/database.ts';
import { recordFile, type FileRecord } from './ledger.ts';
import type { KindLayout } from './layout.ts';
import { STAGE_TABLE, ident } from './stage.ts';

/**
 * One transaction: the `ingested_files` row, then every staged row typed into the raw
 * table by a single INSERT ... SELECT. Either both are there or neither.
 */
export async function loadStage(db: Database, layout: KindLayout, record: FileRecord): Promise<number> {
  return db.transaction(async () => {
    const fileId = await recordFile(db, record);
    // the stage already holds typed values under the canonical names
    const columns = layout.fields.map((f) => ident(f.name)).join(', ');
    await db.run(
      `insert into ${layout.table} (file_id, line, ${columns})
       select $1, rowid + 1, ${columns} from ${STAGE_TABLE}`,
      [fileId],
    );
    return fileId;
  });
}
