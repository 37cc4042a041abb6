import { statSync } from 'node:fs';
import type { Config } from '../config/load.ts';
import { RiskfoldError } from '../errors.ts';
import type { QueryResult } from '../read/readQuery.ts';
import type { ReadHandle } from '../storage/workspace.ts';

export const OUTPUT_FORMATS = ['table', 'csv', 'json'] as const;
export type OutputFormat = (typeof OUTPUT_FORMATS)[number];

export function parseFormat(value: string): OutputFormat {
  if ((OUTPUT_FORMATS as readonly string[]).includes(value)) return value as OutputFormat;
  throw new RiskfoldError('usage', `--format must be one of ${OUTPUT_FORMATS.join(', ')}, got "${value}"`);
}

export function formatResult(result: QueryResult, format: OutputFormat): string {
  if (format === 'csv') return toCsv(result);
  if (format === 'json') return `${JSON.stringify(toObjects(result), null, 2)}\n`;
  return toTable(result);
}

/** Rows as objects keyed by column name, the shape `--format json` prints. */
export function toObjects(result: QueryResult): Record<string, unknown>[] {
  return result.rows.map((row) => Object.fromEntries(result.columns.map((c, i) => [c, row[i]])));
}

/**
 * RFC 4180: a header row, then fields quoted when they hold a comma, quote or line
 * break. Numbers print with String(), the shortest text that parses back to the same
 * double; null is an empty field.
 */
export function toCsv(result: QueryResult): string {
  const lines = [result.columns, ...result.rows].map((row) => row.map((v) => csvField(cellText(v))).join(','));
  return `${lines.join('\n')}\n`;
}

function csvField(text: string): string {
  return /[",\r\n]/.test(text) ? `"${text.replaceAll('"', '""')}"` : text;
}

/** Aligned columns for people: numbers right-aligned, then a row count. */
export function toTable(result: QueryResult): string {
  const cells = result.rows.map((row) => row.map(cellText));
  const numeric = result.columns.map((_, i) => result.rows.length > 0 && result.rows.every((r) => r[i] === null || typeof r[i] === 'number'));
  const widths = result.columns.map((c, i) => Math.max(c.length, ...cells.map((r) => r[i].length)));
  const line = (row: string[]) =>
    row
      .map((text, i) => (numeric[i] ? text.padStart(widths[i]) : text.padEnd(widths[i])))
      .join('  ')
      .trimEnd();
  const out = [line(result.columns), widths.map((w) => '-'.repeat(w)).join('  '), ...cells.map(line)];
  out.push(`(${result.rows.length} ${result.rows.length === 1 ? 'row' : 'rows'})`);
  return `${out.join('\n')}\n`;
}

function cellText(value: unknown): string {
  if (value === null || value === undefined) return '';
  if (typeof value === 'string') return value;
  if (typeof value === 'number' || typeof value === 'boolean') return String(value);
  return JSON.stringify(value);
}

/** Tells the user (on stderr, so stdout stays data) that they see the worker's last published copy. */
export function noteReadCopy(handle: ReadHandle, config: Config): void {
  if (handle.source !== 'read_copy') return;
  const published = statSync(config.readCopy).mtime.toISOString();
  process.stderr.write(`note: a worker holds ${config.database}; reading the copy it published at ${published}\n`);
}
