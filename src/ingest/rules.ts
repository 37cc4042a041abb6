import type { SourceConfig } from '../config/schema.ts';
import { ident } from './csvSql.ts';
import type { FieldSpec, KindLayout } from './layout.ts';

/**
 * The rules a row must meet, as SQL over the typed canonical columns. The load and the
 * diagnosis of a failed load both use these, so they accept exactly the same files.
 */

const CURRENCY_CODE = `'[A-Z]{3}'`;

/** True for a row whose value breaks the field's rule; null for a field without one. */
export function badSql(field: FieldSpec): string | null {
  const col = ident(field.name);
  switch (field.type) {
    case 'date':
      return `${col} is null`;
    case 'positive':
      return `not coalesce(isfinite(${col}) and ${col} > 0, false)`;
    case 'finite':
      return `not coalesce(isfinite(${col}), false)`;
    case 'id':
      // surrounding spaces would make " EQ-A" a security of its own; prefix tests cost no copy, unlike trim()
      return (
        `${col} is null or ${col} = '' or starts_with(${col}, ' ') or ends_with(${col}, ' ')` +
        ` or (starts_with(${col}, 'CASH:') and not regexp_full_match(${col}, 'CASH:' || ${CURRENCY_CODE}))`
      );
    case 'currency': {
      const wrong = `not regexp_full_match(${col}, ${CURRENCY_CODE})`;
      return field.required ? `${col} is null or ${wrong}` : `${col} is not null and ${wrong}`;
    }
    case 'text':
      return null;
  }
}

/** What the field should have held, and the message for the value it did hold. */
export function explain(field: FieldSpec, source: SourceConfig, raw: string | null): { expected: string; message: string } {
  const decimalNote = source.decimal === ',' ? ' (decimal comma)' : '';
  const expected = {
    date: `a date in the format ${source.dateFormat}`,
    positive: `a positive number${decimalNote}`,
    finite: `a number${decimalNote}`,
    id: idExpectation(raw),
    currency: 'an ISO 4217 currency code (three capital letters)',
    text: 'text',
  }[field.type];
  // JSON quoting keeps the message on one line whatever the cell held
  const message = raw === null || raw === '' ? `is empty; expected ${expected}` : `${JSON.stringify(raw)} is not ${expected}`;
  return { expected, message };
}

function idExpectation(raw: string | null): string {
  if (raw === null || raw.trim() === '') return 'a non-empty id';
  if (raw !== raw.trim()) return 'an id without surrounding spaces';
  return 'CASH: followed by an ISO 4217 currency code';
}

/** What a loaded (or staged) file holds, for the ledger and the recompute scope. */
export interface FileSummary {
  rows: number;
  minDate: string | null;
  maxDate: string | null;
  /** Positions: the distinct portfolios; other kinds: null. */
  portfolios: string[] | null;
  /** Distinct keys (by hash): fewer than rows means a key repeats (or, rarely, a collision). */
  keys: number;
}

/** Select items giving a FileSummary's columns over a relation with the canonical columns. */
export function summarySelect(layout: KindLayout): string[] {
  const date = layout.fields.find((f) => f.type === 'date');
  return [
    'count(*)::integer as n_rows',
    date ? `min(${ident(date.name)}) as min_date, max(${ident(date.name)}) as max_date` : 'null as min_date, null as max_date',
    layout.kind === 'positions' ? 'list(distinct portfolio_id order by portfolio_id) as portfolios' : 'null as portfolios',
    `count(distinct hash(${layout.key.map(ident).join(', ')}))::integer as n_keys`,
  ];
}

export function summaryOf(row: Record<string, unknown>): FileSummary {
  return {
    rows: row.n_rows as number,
    minDate: (row.min_date as string | null) ?? null,
    maxDate: (row.max_date as string | null) ?? null,
    portfolios: (row.portfolios as string[] | null) ?? null,
    keys: row.n_keys as number,
  };
}
