import type { SourceConfig } from '../config/schema.ts';
import type { Result } from '../errors.ts';
import type { Database } from '../storage/database.ts';
import { PARSED, csvErrorRejection, ident, readCsvSql, typedSelect } from './csvSql.ts';
import type { ColumnMapping } from './header.ts';
import type { FieldSpec, KindLayout } from './layout.ts';

/** The connection-local table a file is staged in for diagnosis; one file at a time. */
export const STAGE_TABLE = 'ingest_stage';

/** The staged column holding a field's text as delivered (for the error messages). */
export function textColumn(field: FieldSpec): string {
  return PARSED.has(field.type) ? `${field.name}_text` : field.name;
}

/**
 * Reads the file into STAGE_TABLE in one scan: the typed canonical columns, and beside
 * each parsed one its text in `<name>_text`. Row numbers are the table's rowid + 1:
 * CREATE TABLE AS keeps the file's order.
 */
export async function stageFile(
  db: Database,
  filePath: string,
  name: string,
  source: SourceConfig,
  layout: KindLayout,
  mapping: ColumnMapping,
): Promise<Result<void>> {
  const texts = layout.fields.filter((f) => PARSED.has(f.type)).map((f) => `${ident(f.name)} as ${ident(textColumn(f))}`);
  const select = [...typedSelect(layout, source, mapping), ...texts].join(', ');
  try {
    await db.run(`create or replace temp table ${STAGE_TABLE} as select ${select} from ${readCsvSql(filePath, source, mapping)}`);
  } catch (err) {
    const rejection = csvErrorRejection(err, name);
    if (rejection) return { ok: false, rejection };
    throw err;
  }
  return { ok: true, value: undefined };
}

/** Drops the stage; called whatever became of the file. */
export async function dropStage(db: Database): Promise<void> {
  await db.run(`drop table if exists ${STAGE_TABLE}`);
}
