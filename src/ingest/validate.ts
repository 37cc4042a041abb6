import type { SourceConfig } from '../config/schema.ts';
import type { Rejection, Result } from '../errors.ts';
import type { Database } from '../storage/database.ts';
import type { FieldSpec, KindLayout } from './layout.ts';
import { STAGE_TABLE, ident, textColumn } from './stage.ts';

export interface StageSummary {
  rows: number;
  minDate: string | null;
  maxDate: string | null;
  /** Positions: the distinct portfolios; other kinds: null. */
  portfolios: string[] | null;
}

const CURRENCY_CODE = `'[A-Z]{3}'`;

/** True for a row whose value breaks the field's rule; null for a field without one. */
function badSql(field: FieldSpec): string | null {
  const col = ident(field.name);
  switch (field.type) {
    case 'date':
      return `${col} is null`;
    case 'positive':
      return `not coalesce(isfinite(${col}) and ${col} > 0, false)`;
    case 'finite':
      return `not coalesce(isfinite(${col}), false)`;
    case 'id':
      return `${col} is null or ${col} = '' or (starts_with(${col}, 'CASH:') and not regexp_full_match(${col}, 'CASH:' || ${CURRENCY_CODE}))`;
    case 'currency': {
      const wrong = `not regexp_full_match(${col}, ${CURRENCY_CODE})`;
      return field.required ? `${col} is null or ${wrong}` : `${col} is not null and ${wrong}`;
    }
    case 'text':
      return null;
  }
}

/** What the field should have held, and the message for the value it did hold. */
function explain(field: FieldSpec, source: SourceConfig, raw: string | null): { expected: string; message: string } {
  const decimalNote = source.decimal === ',' ? ' (decimal comma)' : '';
  const expected = {
    date: `a date in the format ${source.dateFormat}`,
    positive: `a positive number${decimalNote}`,
    finite: `a number${decimalNote}`,
    id: raw?.startsWith('CASH:') ? 'CASH: followed by an ISO 4217 currency code' : 'a non-empty id',
    currency: 'an ISO 4217 currency code (three capital letters)',
    text: 'text',
  }[field.type];
  const message = raw === null || raw === '' ? `is empty; expected ${expected}` : `"${raw}" is not ${expected}`;
  return { expected, message };
}

/**
 * Checks the staged file in one scan: every field's rule, counted by its first failing
 * row, plus the row count, the date range, the portfolios and a count of distinct keys.
 * Only when that count shows a repeated key does a second query look for it. The
 * earliest failing row wins (ties: the field order of the layout).
 */
export async function validateStage(db: Database, layout: KindLayout, source: SourceConfig, file: string): Promise<Result<StageSummary>> {
  const checked = layout.fields.flatMap((f) => {
    const bad = badSql(f);
    return bad === null ? [] : [{ field: f, bad }];
  });
  const dateField = layout.fields.find((f) => f.type === 'date');
  const keys = layout.key.map(ident);
  const select = [
    'count(*)::integer as n_rows',
    dateField ? `min(${ident(dateField.name)}) as min_date, max(${ident(dateField.name)}) as max_date` : 'null as min_date, null as max_date',
    layout.kind === 'positions' ? 'list(distinct portfolio_id order by portfolio_id) as portfolios' : 'null as portfolios',
    `count(distinct hash(${keys.join(', ')}))::integer as n_keys`,
    ...checked.map((c, i) => `(min(rowid) filter (where ${c.bad}))::integer + 1 as bad_${i}`),
  ];
  const [summary] = await db.all<Record<string, unknown>>(`select ${select.join(', ')} from ${STAGE_TABLE}`);
  const rows = summary.n_rows as number;
  if (rows === 0) {
    return { ok: false, rejection: { code: 'empty_file', file, message: 'has a header but no data rows' } };
  }

  const failures: { row: number; rejection: () => Promise<Rejection> }[] = [];
  checked.forEach((c, i) => {
    const row = summary[`bad_${i}`] as number | null;
    if (row !== null) failures.push({ row, rejection: () => valueRejection(db, c.field, source, file, row) });
  });
  if ((summary.n_keys as number) < rows) {
    const repeat = await firstRepeatedKey(db, layout);
    // a hash collision without a real repeat leaves `repeat` null
    if (repeat) failures.push({ row: repeat.row, rejection: async () => duplicateRejection(layout, file, repeat) });
  }
  if (failures.length > 0) {
    const first = failures.reduce((a, b) => (b.row < a.row ? b : a));
    return { ok: false, rejection: await first.rejection() };
  }
  return {
    ok: true,
    value: {
      rows,
      minDate: (summary.min_date as string | null) ?? null,
      maxDate: (summary.max_date as string | null) ?? null,
      portfolios: (summary.portfolios as string[] | null) ?? null,
    },
  };
}

async function valueRejection(db: Database, field: FieldSpec, source: SourceConfig, file: string, row: number): Promise<Rejection> {
  const [hit] = await db.all<{ v: string | null }>(`select ${ident(textColumn(field))} as v from ${STAGE_TABLE} where rowid = $1`, [row - 1]);
  const raw = hit?.v ?? null;
  return { code: 'bad_value', file, row, column: field.name, value: raw ?? '', ...explain(field, source, raw) };
}

interface RepeatedKey {
  row: number;
  firstRow: number;
  values: (string | null)[];
}

/** The earliest row whose key an earlier row of the file already had. */
async function firstRepeatedKey(db: Database, layout: KindLayout): Promise<RepeatedKey | null> {
  const partition = layout.key.map(ident).join(', ');
  const texts = layout.key.map((k, i) => `${ident(textColumn(fieldOf(layout, k)))} as k${i}`).join(', ');
  const textNames = layout.key.map((_, i) => `k${i}`).join(', ');
  const [hit] = await db.all<Record<string, unknown>>(
    `with ranked as (select rowid + 1 as row, min(rowid + 1) over (partition by ${partition}) as first_row, ${texts} from ${STAGE_TABLE})
     select row::integer as row, first_row::integer as first_row, ${textNames} from ranked
     where row > first_row order by row limit 1`,
  );
  if (!hit) return null;
  return { row: hit.row as number, firstRow: hit.first_row as number, values: layout.key.map((_, i) => hit[`k${i}`] as string | null) };
}

function fieldOf(layout: KindLayout, name: string): FieldSpec {
  const field = layout.fields.find((f) => f.name === name);
  if (!field) throw new Error(`${layout.kind} has no field ${name}`);
  return field;
}

function duplicateRejection(layout: KindLayout, file: string, repeat: RepeatedKey): Rejection {
  const key = layout.key.join('+');
  const value = repeat.values.map((v) => `"${v ?? ''}"`).join(', ');
  return {
    code: 'duplicate_key',
    file,
    row: repeat.row,
    column: key,
    value,
    expected: `one row per ${key}`,
    message: `${value} repeats the ${key} of row ${repeat.firstRow}`,
  };
}
