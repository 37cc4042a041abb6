import type { SourceConfig } from '../config/schema.ts';
import { ident } from './csvSql.ts';
import type { FieldSpec, KindLayout } from './layout.ts';
import type { Plausibility } from './plausibility.ts';
import { sqlString, type Database } from '../storage/database.ts';

/**
 * The rules a row must meet, as SQL over the typed canonical columns. The load and the
 * diagnosis of a failed load both use these, so they accept exactly the same files.
 */

const CURRENCY_CODE = `'[A-Z]{3}'`;

/**
 * Characters an id may not hold: control characters (NUL, line breaks, ESC of terminal
 * sequences) and format characters (bidirectional marks, zero-width joiners), which
 * make two ids look alike or rewrite the line they are printed on.
 */
const UNPRINTABLE = `'[\\p{Cc}\\p{Cf}\\p{Zl}\\p{Zp}]'`;

/** True for a row whose value breaks the field's rule; null for a field without one. */
export function badSql(field: FieldSpec, bounds: Plausibility): string | null {
  const col = ident(field.name);
  const { minMagnitude: min, maxMagnitude: max } = bounds;
  switch (field.type) {
    case 'date':
      return `${col} is null or ${col} < ${sqlString(bounds.earliestDate)}::date or ${col} > ${sqlString(bounds.latestDate)}::date`;
    case 'positive':
      return `not coalesce(${col} between ${min} and ${max}, false)`;
    case 'finite':
      return `not coalesce(${col} = 0 or abs(${col}) between ${min} and ${max}, false)`;
    case 'fraction':
      // a weight of 40 meant as 40% is refused, not read as 4,000%
      return `not coalesce(${col} = 0 or abs(${col}) between ${min} and 1, false)`;
    case 'id':
      // surrounding spaces would make " EQ-A" a security of its own; prefix tests cost no copy, unlike trim()
      return (
        `${col} is null or ${col} = '' or starts_with(${col}, ' ') or ends_with(${col}, ' ')` +
        ` or regexp_matches(${col}, ${UNPRINTABLE})` +
        ` or (is_cash(${col}) and not regexp_full_match(cash_currency(${col}), ${CURRENCY_CODE}))`
      );
    case 'currency': {
      const wrong = `not regexp_full_match(${col}, ${CURRENCY_CODE})`;
      return field.required ? `${col} is null or ${wrong}` : `${col} is not null and ${wrong}`;
    }
    case 'text':
      return null;
  }
}

/**
 * What the field should have held, and the message for the value it did hold. `parsed`
 * is the typed value (null where the text did not parse): a value that parses but lies
 * outside the plausible range gets a message naming the range.
 */
export function explain(
  field: FieldSpec,
  source: SourceConfig,
  raw: string | null,
  parsed: unknown,
  bounds: Plausibility,
): { expected: string; message: string } {
  const decimalNote = source.decimal === ',' ? ' (decimal comma)' : '';
  const outOfRange = implausible(field, parsed, bounds);
  const expected =
    outOfRange ??
    {
      date: `a date in the format ${source.dateFormat}`,
      positive: `a positive number${decimalNote}`,
      fraction: `a fraction from -1 to 1${decimalNote} (0.4 = 40%)`,
      finite: `a number${decimalNote}`,
      id: idExpectation(raw),
      currency: 'an ISO 4217 currency code (three capital letters)',
      text: 'text',
    }[field.type];
  const message = raw === null || raw === '' ? `is empty; expected ${expected}` : `${quoted(raw)} is not ${expected}`;
  return { expected, message };
}

/** The range a value that did parse (as a date, a positive price, a number) fell outside; null otherwise. */
function implausible(field: FieldSpec, parsed: unknown, bounds: Plausibility): string | null {
  const range = `of magnitude ${bounds.minMagnitude} to ${bounds.maxMagnitude}`;
  if (field.type === 'date' && parsed !== null) return `a date from ${bounds.earliestDate} to ${bounds.latestDate}`;
  if (typeof parsed !== 'number' || !Number.isFinite(parsed)) return null;
  if (field.type === 'positive' && parsed > 0) return `a positive number ${range}`;
  if (field.type === 'finite') return `a number of zero or ${range}`;
  if (field.type === 'fraction') return `a fraction from -1 to 1 (0.4 = 40%), zero or of magnitude ${bounds.minMagnitude} or more`;
  return null;
}

/**
 * JSON quoting keeps the message on one line whatever the cell held; format and
 * separator characters, which JSON leaves as they are, are escaped too, so a
 * right-to-left mark cannot reorder the line it is printed on.
 */
function quoted(raw: string): string {
  return JSON.stringify(raw).replace(/[\p{Cf}\p{Zl}\p{Zp}]/gu, (c) => `\\u${c.charCodeAt(0).toString(16).padStart(4, '0')}`);
}

function idExpectation(raw: string | null): string {
  if (raw === null || raw.trim() === '') return 'a non-empty id';
  if (raw !== raw.trim()) return 'an id without surrounding spaces';
  if (/[\p{Cc}\p{Cf}\p{Zl}\p{Zp}]/u.test(raw)) return 'an id of printable characters (no control, format or bidirectional marks)';
  return 'CASH: followed by an ISO 4217 currency code';
}

/** What a loaded (or staged) file holds, for the ledger and the recompute scope. */
export interface FileSummary {
  rows: number;
  minDate: string | null;
  maxDate: string | null;
  /** Positions: the distinct portfolios; other kinds: null. */
  portfolios: string[] | null;
}

/** Select items giving a FileSummary's columns over a relation with the canonical columns. */
export function summarySelect(layout: KindLayout): string[] {
  const date = layout.fields.find((f) => f.type === 'date');
  return [
    'count(*)::integer as n_rows',
    date ? `min(${ident(date.name)}) as min_date, max(${ident(date.name)}) as max_date` : 'null as min_date, null as max_date',
    layout.kind === 'positions' ? 'list(distinct portfolio_id order by portfolio_id) as portfolios' : 'null as portfolios',
  ];
}

/**
 * Whether a key may repeat among `table`'s rows: some two rows share the hash of their
 * key (a repeat, or rarely a collision, which the caller's exact query then tells apart).
 * The hashes are sorted and each compared with the one before: on a file of millions of
 * distinct keys that costs about half of count(distinct ...)'s hash table (measured on the
 * bench's positions file).
 */
export async function keyHashRepeats(db: Database, table: string, layout: KindLayout): Promise<boolean> {
  const [{ repeats }] = await db.all<{ repeats: number }>(
    `select count(*)::integer as repeats
     from (select h = lag(h) over (order by h) as same from (select hash(${layout.key.map(ident).join(', ')}) as h from ${table}))
     where same`,
  );
  return repeats > 0;
}

export function summaryOf(row: Record<string, unknown>): FileSummary {
  return {
    rows: row.n_rows as number,
    minDate: (row.min_date as string | null) ?? null,
    maxDate: (row.max_date as string | null) ?? null,
    portfolios: (row.portfolios as string[] | null) ?? null,
  };
}
