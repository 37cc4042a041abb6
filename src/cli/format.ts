import { statSync } from 'node:fs';
import type { Config } from '../config/load.ts';
import { RiskfoldError } from '../errors.ts';
import { unitAt, type QueryResult, type Unit } from '../read/readQuery.ts';
import type { StatusSection } from '../read/readStatus.ts';
import type { ReadHandle } from '../storage/workspace.ts';
import { forTableCell, forTerminal, jsonForTerminal } from './terminalText.ts';

export const OUTPUT_FORMATS = ['table', 'csv', 'json'] as const;
export type OutputFormat = (typeof OUTPUT_FORMATS)[number];

export function parseFormat(value: string): OutputFormat {
  if ((OUTPUT_FORMATS as readonly string[]).includes(value)) return value as OutputFormat;
  throw new RiskfoldError('usage', `--format must be one of ${OUTPUT_FORMATS.join(', ')}, got "${value}"`);
}

export function formatResult(result: QueryResult, format: OutputFormat): string {
  if (format === 'csv') return toCsv(result);
  if (format === 'json') return `${jsonForTerminal(JSON.stringify(toObjects(result), null, 2))}\n`;
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

/**
 * Aligned columns for people: numbers right-aligned and rounded for reading (fractions
 * of a `percent` column as percentages, `amount` columns with two decimals), then a row
 * count. csv and json are the formats that keep full precision.
 */
export function toTable(result: QueryResult): string {
  const cells = result.rows.map((row, r) => row.map((v, i) => tableCell(v, unitAt(result, r, i))));
  const numeric = result.columns.map((_, i) => result.rows.length > 0 && result.rows.every((r) => r[i] === null || typeof r[i] === 'number'));
  const headers = result.columns.map(forTableCell);
  const widths = headers.map((h, i) => Math.max(h.length, ...cells.map((r) => r[i].length)));
  const line = (row: string[]) =>
    row
      .map((text, i) => (numeric[i] ? text.padStart(widths[i]) : text.padEnd(widths[i])))
      .join('  ')
      .trimEnd();
  const out = [line(headers), widths.map((w) => '-'.repeat(w)).join('  '), ...cells.map(line)];
  out.push(`(${result.rows.length} ${result.rows.length === 1 ? 'row' : 'rows'})`);
  return `${out.join('\n')}\n`;
}

function tableCell(value: unknown, unit: Unit | null): string {
  if (typeof value === 'boolean') return value ? 'yes' : 'no';
  if (typeof value !== 'number' || !Number.isFinite(value)) return forTableCell(cellText(value));
  if (unit === 'percent') return `${(value * 100).toFixed(2)}%`;
  if (unit === 'amount') return value.toLocaleString('en-US', { minimumFractionDigits: 2, maximumFractionDigits: 2 });
  return readableNumber(value);
}

/**
 * Integers as they are; other numbers to six significant digits, but never fewer than
 * two decimals of a large figure (8470123.4567 shows as 8470123.46, not 8470120).
 */
export function readableNumber(value: number): string {
  if (Number.isInteger(value)) return String(value);
  const integerDigits = Math.max(1, Math.floor(Math.log10(Math.abs(value))) + 1);
  return String(Number(value.toPrecision(Math.min(17, Math.max(6, integerDigits + 2)))));
}

function cellText(value: unknown): string {
  if (value === null || value === undefined) return '';
  if (typeof value === 'string') return value;
  if (typeof value === 'number' || typeof value === 'boolean') return String(value);
  return JSON.stringify(value);
}

/** Writes a command's result to stdout; csv, the one raw format, is escaped only when a person reads it on a terminal. */
export function writeResult(text: string, format: OutputFormat): void {
  process.stdout.write(format === 'csv' && process.stdout.isTTY ? forTerminal(text) : text);
}

/** Tells the user (on stderr, so stdout stays data) that they see the worker's last published copy. */
export function noteReadCopy(handle: ReadHandle, config: Config): void {
  if (handle.source !== 'read_copy') return;
  const published = statSync(config.readCopy).mtime.toISOString();
  process.stderr.write(`note: a worker holds ${config.database}; reading the copy it published at ${published}\n`);
}

/** Titled sections (status, explain): json as one object keyed by section, csv with `#` headings, tables with `==` headings. */
export function formatSections(sections: StatusSection[], format: OutputFormat, source: string): string {
  if (format === 'json') {
    const body = Object.fromEntries(
      sections.map((s) => [s.key, { total: s.total, rows: toObjects(s.result), ...(s.note ? { note: s.note } : {}) }]),
    );
    return `${jsonForTerminal(JSON.stringify({ source, ...body }, null, 2))}\n`;
  }
  return sections
    .map((s) => {
      const more = s.total > s.result.rows.length ? ` (latest ${s.result.rows.length} of ${s.total})` : '';
      const heading = format === 'csv' ? `# ${s.title}${more}` : `== ${s.title}${more}`;
      const note = s.note ? `${s.note}\n` : '';
      if (s.total === 0) return `${heading}\n${note || 'none\n'}`;
      return `${heading}\n${note}${formatResult(s.result, format)}`;
    })
    .join('\n');
}
