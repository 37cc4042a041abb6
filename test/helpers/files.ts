import { mkdirSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { gzipSync } from 'node:zlib';

export interface CsvOptions {
  delimiter?: string;
  /** Line ending; default '\n'. */
  eol?: '\n' | '\r\n';
  /** Prefix the UTF-8 byte-order mark. */
  bom?: boolean;
  /** Write gzip-compressed bytes (give the name a .gz ending). */
  gzip?: boolean;
}

/**
 * Writes a CSV file (header row first) and returns its path. Cells are written as
 * given, no quoting: tests choose their own bad input byte for byte.
 */
export function writeCsv(dir: string, name: string, rows: (string | number)[][], options: CsvOptions = {}): string {
  const eol = options.eol ?? '\n';
  const text = rows.map((r) => r.join(options.delimiter ?? ',')).join(eol) + eol;
  const bytes = Buffer.concat([Buffer.from(options.bom ? '\uFEFF' : ''), Buffer.from(text, 'utf8')]);
  mkdirSync(dir, { recursive: true });
  const file = path.join(dir, name);
  writeFileSync(file, options.gzip ? gzipSync(bytes) : bytes);
  return file;
}
