import { createReadStream } from 'node:fs';
import { createGunzip } from 'node:zlib';
import type { SourceConfig } from '../config/schema.ts';
import { RiskfoldError, type Result } from '../errors.ts';
import { dateFormatsOf, looksLikeNumber } from './cellShapes.ts';
import type { KindLayout } from './layout.ts';

/** A header longer than this is not a header: the file is not the CSV we expect. */
const MAX_HEADER_BYTES = 1 << 20;
const QUOTE = 0x22;
const NEWLINE = 0x0a;

/**
 * The file's first line (decompressed for `.gz`, byte-order mark and CR removed), or
 * null for a file without a single byte. Only the first line is read: the rows are
 * DuckDB's job. Reading it here, rather than letting DuckDB sniff, keeps the column
 * count the header's own, so a short or long data row is an error and not a guess.
 */
export async function readHeaderLine(filePath: string): Promise<string | null> {
  const raw = createReadStream(filePath, { highWaterMark: 64 * 1024 });
  const stream = /\.gz$/i.test(filePath) ? raw.pipe(createGunzip()) : raw;
  let bytes = Buffer.alloc(0);
  try {
    for await (const chunk of stream as AsyncIterable<Buffer>) {
      bytes = Buffer.concat([bytes, chunk]);
      const end = firstLineEnd(bytes);
      if (end >= 0) return decodeLine(bytes.subarray(0, end));
      if (bytes.length > MAX_HEADER_BYTES) break;
    }
  } finally {
    raw.destroy();
    stream.destroy();
  }
  if (bytes.length > MAX_HEADER_BYTES) throw new HeaderTooLong();
  return bytes.length === 0 ? null : decodeLine(bytes);
}

class HeaderTooLong extends Error {
  constructor() {
    super(`the first line is longer than ${MAX_HEADER_BYTES} bytes`);
  }
}

/** Index of the first newline outside double quotes, or -1. */
function firstLineEnd(bytes: Buffer): number {
  let quoted = false;
  for (let i = 0; i < bytes.length; i++) {
    if (bytes[i] === QUOTE) quoted = !quoted;
    else if (bytes[i] === NEWLINE && !quoted) return i;
  }
  return -1;
}

function decodeLine(bytes: Buffer): string {
  return bytes.toString('utf8').replace(/^\uFEFF/, '').replace(/\r$/, '');
}

/** Splits a header line on the delimiter, honouring "quoted ""names""". Names are trimmed. */
export function splitHeader(line: string, delimiter: string): string[] {
  const names: string[] = [];
  let current = '';
  let quoted = false;
  for (let i = 0; i < line.length; i++) {
    const ch = line[i];
    if (quoted) {
      if (ch !== '"') current += ch;
      else if (line[i + 1] === '"') (current += '"'), i++;
      else quoted = false;
    } else if (ch === '"') quoted = true;
    else if (ch === delimiter) names.push(current.trim()), (current = '');
    else current += ch;
  }
  names.push(current.trim());
  return names;
}

/** For each header position: the canonical column it carries, or null (a column we do not read). */
export type ColumnMapping = (string | null)[];

/** Reads the header and maps it; an empty or unreadable first line is a rejection. */
export async function readColumnMapping(filePath: string, name: string, source: SourceConfig, layout: KindLayout): Promise<Result<ColumnMapping>> {
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
  return mapColumns(splitHeader(line, source.delimiter), source, layout, name);
}

function isZlibError(err: unknown): boolean {
  const code = (err as { code?: unknown } | null)?.code;
  return typeof code === 'string' && code.startsWith('Z_');
}

/**
 * Maps the source's header onto canonical names: `source.columns` renames
 * (canonical -> header name), everything else is expected under its canonical name;
 * names compare trimmed and case-insensitively.
 */
export function mapColumns(header: string[], source: SourceConfig, layout: KindLayout, file: string): Result<ColumnMapping> {
  for (const canonical of Object.keys(source.columns)) {
    if (!layout.fields.some((f) => f.name === canonical)) {
      throw new RiskfoldError(
        'config_invalid',
        `source "${source.name}": columns maps "${canonical}", which is not a ${layout.kind} column (${layout.fields.map((f) => f.name).join(', ')})`,
      );
    }
  }
  const normal = (s: string) => s.trim().toLowerCase();
  const found = header.map(normal);
  const mapping: ColumnMapping = header.map(() => null);
  for (const field of layout.fields) {
    const wanted = source.columns[field.name] ?? field.name;
    const at = found.flatMap((h, i) => (h === normal(wanted) ? [i] : []));
    const shown = `"${header.join('", "')}"`;
    if (at.length === 0 && field.required) {
      const sign = dataRowSign(header);
      if (sign !== null) return noHeader(file, header, sign);
      const renamed = wanted === field.name ? '' : ` (as "${wanted}")`;
      return reject(file, 'missing_column', field.name, header.join(','), `is missing${renamed}; header found: ${shown}`, `a column "${wanted}"`);
    }
    if (at.length > 1) {
      return reject(file, 'unreadable', field.name, header.join(','), `header names "${wanted}" ${at.length} times: ${shown}`, `"${wanted}" once`);
    }
    if (at.length === 1) mapping[at[0]] = field.name;
  }
  return { ok: true, value: mapping };
}

/**
 * Why a first line reads as a data row rather than a header: it starts with a date, or
 * most of its fields are numbers; null when it may well be a header with other names.
 */
export function dataRowSign(fields: string[]): string | null {
  if (dateFormatsOf(fields[0] ?? '').length > 0) return 'it starts with a date';
  const filled = fields.filter((f) => f !== '');
  if (filled.filter(looksLikeNumber).length * 2 > filled.length) return 'most of its fields are numbers';
  return null;
}

/** The file starts with data: the rest of a delivery written in two parts, most likely. */
function noHeader(file: string, header: string[], sign: string): Result<never> {
  return {
    ok: false,
    rejection: {
      code: 'no_header',
      file,
      // row 0 is where the header belongs: line 1
      row: 0,
      value: header.join(','),
      expected: 'a header line naming the columns',
      message: `has no header line: its first line "${header.join('", "')}" reads as a data row (${sign}), perhaps the rest of a file written in two parts`,
    },
  };
}

function reject(
  file: string,
  code: 'missing_column' | 'unreadable',
  column: string,
  value: string,
  message: string,
  expected: string,
): Result<never> {
  // no row: the header is not a data row
  return { ok: false, rejection: { code, file, column, value, expected, message } };
}
