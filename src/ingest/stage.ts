import type { SourceConfig } from '../config/schema.ts';
import type { Rejection, Result } from '../errors.ts';
import { sqlString, type Database } from '../storage/database.ts';
import { HeaderTooLong, mapColumns, readHeaderLine, splitHeader, type ColumnMapping } from './header.ts';
import type { FieldSpec, FieldType, KindLayout } from './layout.ts';

/** The connection-local table one file is staged in; the worker ingests one file at a time. */
export const STAGE_TABLE = 'ingest_stage';

/** Identifier quoting for the canonical and placeholder column names. */
export function ident(name: string): string {
  return `"${name.replaceAll('"', '""')}"`;
}

/** Types whose staged column is parsed; the text as delivered stays beside it for the error messages. */
const PARSED: ReadonlySet<FieldType> = new Set(['date', 'positive', 'finite']);

/** The staged column holding a field's text as delivered. */
export function textColumn(field: FieldSpec): string {
  return PARSED.has(field.type) ? `${field.name}_text` : field.name;
}

/** The field parsed from its text column, null where the text does not parse. */
function parsedSql(field: FieldSpec, source: SourceConfig): string {
  const col = ident(field.name);
  if (field.type === 'date') return `try_strptime(${col}, ${sqlString(source.dateFormat)})::date`;
  // decimal comma: "1.234,56" -> "1234.56"
  const text = source.decimal === ',' ? `replace(replace(${col}, '.', ''), ',', '.')` : col;
  return `try_cast(${text} as double)`;
}

/**
 * Reads the file into STAGE_TABLE in one scan: per canonical field a column named after
 * it, typed (date, double) or, for ids and codes, trimmed text; parsed fields keep their
 * text in `<name>_text`. Optional fields absent from the header are null. Row numbers
 * are the table's rowid + 1: CREATE TABLE AS keeps the file's order.
 */
export async function stageFile(
  db: Database,
  filePath: string,
  name: string,
  source: SourceConfig,
  layout: KindLayout,
): Promise<Result<void>> {
  let line: string | null;
  try {
    line = await readHeaderLine(filePath);
  } catch (err) {
    if (err instanceof HeaderTooLong || isZlibError(err)) {
      return { ok: false, rejection: { code: 'unreadable', file: name, message: `cannot be read: ${(err as Error).message}` } };
    }
    throw err;
  }
  if (line === null || line.trim() === '') {
    return { ok: false, rejection: { code: 'empty_file', file: name, message: 'is empty; expected a header row and data rows' } };
  }
  const mapped = mapColumns(splitHeader(line, source.delimiter), source, layout, name);
  if (!mapped.ok) return mapped;

  const select = layout.fields.flatMap((f) => {
    const col = ident(f.name);
    if (!mapped.value.includes(f.name)) return [`null::varchar as ${col}`];
    if (PARSED.has(f.type)) return [`${parsedSql(f, source)} as ${col}`, `${col} as ${ident(textColumn(f))}`];
    return [f.type === 'text' ? col : `trim(${col}) as ${col}`];
  });
  try {
    await db.run(`create or replace temp table ${STAGE_TABLE} as select ${select.join(', ')} from ${readCsvSql(filePath, source, mapped.value)}`);
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

/**
 * read_csv with every option spelled out, so nothing is sniffed: the columns come from
 * the header we read, all as varchar (typing is ours, with row numbers in the errors),
 * strict quoting, and a wrong number of fields is an error rather than padding.
 */
function readCsvSql(filePath: string, source: SourceConfig, mapping: ColumnMapping): string {
  const columns = mapping.map((canonical, i) => `${sqlString(canonical ?? `unused_${i + 1}`)}: 'VARCHAR'`).join(', ');
  const options = [
    'header = true',
    'auto_detect = false',
    `columns = {${columns}}`,
    `delim = ${sqlString(source.delimiter)}`,
    `quote = '"'`,
    `escape = '"'`,
    'skip = 0',
    'strict_mode = true',
    'null_padding = false',
    'ignore_errors = false',
    `compression = 'auto'`,
  ];
  return `read_csv(${sqlString(filePath)}, ${options.join(', ')})`;
}

/**
 * DuckDB reports a malformed row as "CSV Error on Line: N / Original Line: ... / reason";
 * any invalid-input error is the file's fault, not the machine's.
 */
function csvErrorRejection(err: unknown, file: string): Rejection | null {
  const text = err instanceof Error ? err.message : String(err);
  if (!/^(Invalid Input Error|Conversion Error)/.test(text)) return null;
  return rejectionOf(text, file);
}

function rejectionOf(text: string, file: string): Rejection {
  const lineNo = /CSV Error on Line: (\d+)/.exec(text);
  const original = /Original Line: (.*)/.exec(text)?.[1];
  const beforeFixes = text.split(/\nPossible fixes:/)[0];
  const lines = beforeFixes.split('\n').map((l) => l.trim()).filter(Boolean);
  const reason = (lineNo ? lines[lines.length - 1] : lines[0]).replace(/^Invalid Input Error: /, '');
  return {
    code: 'unreadable',
    file,
    // DuckDB counts physical lines with the header as line 1; our rows start after it
    row: lineNo ? Number(lineNo[1]) - 1 : undefined,
    value: original,
    expected: 'a well-formed CSV row with one field per header column',
    message: original === undefined ? `cannot be read as CSV: ${reason}` : `cannot be read as CSV (${reason}): "${original}"`,
  };
}

function isZlibError(err: unknown): boolean {
  return typeof (err as { code?: unknown })?.code === 'string' && (err as { code: string }).code.startsWith('Z_');
}
