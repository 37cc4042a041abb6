import type { SourceConfig } from '../config/schema.ts';
import type { Rejection } from '../errors.ts';
import { sqlString } from '../storage/database.ts';
import type { ColumnMapping } from './header.ts';
import type { FieldSpec, FieldType, KindLayout } from './layout.ts';

/** Identifier quoting for the canonical and placeholder column names. */
export function ident(name: string): string {
  return `"${name.replaceAll('"', '""')}"`;
}

/** Types whose text is parsed (into date or double). */
export const PARSED: ReadonlySet<FieldType> = new Set(['date', 'positive', 'finite', 'fraction']);

/** The field parsed from the text column of the same name, null where the text does not parse. */
export function parsedSql(field: FieldSpec, source: SourceConfig): string {
  const col = ident(field.name);
  if (field.type === 'date') {
    // the ISO default: the shape test plus a cast does what strptime does at half the cost;
    // the shape test keeps out what the cast alone would take ('26-04-01', 'infinity', times)
    if (source.dateFormat === '%Y-%m-%d') return `case when ${col} like '____-__-__' then try_cast(${col} as date) end`;
    return `try_strptime(${col}, ${sqlString(source.dateFormat)})::date`;
  }
  // decimal comma: "1.234,56" -> "1234.56"
  const text = source.decimal === ',' ? `replace(replace(${col}, '.', ''), ',', '.')` : col;
  // the cast alone reads "1_75.5" as 175.5 and "+-1" as -1; two substring tests (not a
  // regular expression, which would cost the load a third of its speed) refuse both
  return `case when not (contains(${text}, '_') or contains(${text}, '+-')) then try_cast(${text} as double) end`;
}

/**
 * One select item per canonical field, read from the CSV columns of `readCsvSql`: parsed
 * fields typed, ids and text as delivered, optional fields absent from the header null.
 */
export function typedSelect(layout: KindLayout, source: SourceConfig, mapping: ColumnMapping): string[] {
  return layout.fields.map((f) => {
    const col = ident(f.name);
    if (!mapping.includes(f.name)) return `null::varchar as ${col}`;
    return PARSED.has(f.type) ? `${parsedSql(f, source)} as ${col}` : col;
  });
}

/**
 * read_csv with every option spelled out, so nothing is sniffed: the columns come from
 * the header we read (mapped ones under their canonical name), all as varchar (typing is
 * ours), strict quoting, and a wrong number of fields is an error rather than padding.
 */
export function readCsvSql(filePath: string, source: SourceConfig, mapping: ColumnMapping): string {
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
 * any invalid-input error is the file's fault, not the machine's. Null for other errors.
 */
export function csvErrorRejection(err: unknown, file: string): Rejection | null {
  const text = err instanceof Error ? err.message : String(err);
  if (!/^(Invalid Input Error|Conversion Error)/.test(text)) return null;
  const lineNo = /CSV Error on Line: (\d+)/.exec(text);
  const original = /Original Line: (.*)/.exec(text)?.[1];
  const lines = text
    .split(/\nPossible fixes:/)[0]
    .split('\n')
    .map((l) => l.trim())
    .filter(Boolean);
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
