import type { SourceConfig } from '../config/schema.ts';
import type { Database } from '../storage/database.ts';
import { recordFile, type FileRecord } from './ledger.ts';
import type { KindLayout } from './layout.ts';
import { STAGE_TABLE, ident } from './stage.ts';
import { typedSql } from './validate.ts';

/**
 * One transaction: the `ingested_files` row, then every staged row typed into the raw
 * table by a single INSERT ... SELECT. Either both are there or neither.
 */
export async function loadStage(db: Database, layout: KindLayout, source: SourceConfig, record: FileRecord): Promise<number> {
  return db.transaction(async () => {
    const fileId = await recordFile(db, record);
    const columns = layout.fields.map((f) => ident(f.name));
    const values = layout.fields.map((f) => typedSql(f, source));
    await db.run(
      `insert into ${layout.table} (file_id, line, ${columns.join(', ')})
       select $1, rowid + 1, ${values.join(', ')} from ${STAGE_TABLE}`,
      [fileId],
    );
    return fileId;
  });
}
