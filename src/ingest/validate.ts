import type { SourceConfig } from '../config/schema.ts';
import { fileLine, type Rejection } from '../errors.ts';
import type { Database } from '../storage/database.ts';
import { ident } from './csvSql.ts';
import type { FieldSpec, KindLayout } from './layout.ts';
import type { Plausibility } from './plausibility.ts';
import { badSql, explain, keyHashRepeats, summaryOf, summarySelect } from './rules.ts';
import { STAGE_TABLE, textColumn } from './stage.ts';
import { unbalancedWeightsRejection } from './weightSums.ts';

/**
 * Finds why the staged file cannot be loaded: one scan for every field's rule, counted
 * by its first failing row, with the row count; one pass over the keys' hashes, and only
 * when two are equal a query that looks for the repeated key. The earliest failing
 * row wins (ties: the field order of the layout); a benchmarks file whose rows all pass
 * is then checked for a snapshot whose weights do not add up to 1. Null: nothing wrong.
 */
export async function findFirstProblem(
  db: Database,
  layout: KindLayout,
  source: SourceConfig,
  bounds: Plausibility,
  file: string,
): Promise<Rejection | null> {
  const checked = layout.fields.flatMap((f) => {
    const bad = badSql(f, bounds);
    return bad === null ? [] : [{ field: f, bad }];
  });
  const select = [...summarySelect(layout), ...checked.map((c, i) => `(min(rowid) filter (where ${c.bad}))::integer + 1 as bad_${i}`)];
  const [row] = await db.all<Record<string, unknown>>(`select ${select.join(', ')} from ${STAGE_TABLE}`);
  const summary = summaryOf(row);
  if (summary.rows === 0) return { code: 'empty_file', file, message: 'has a header but no data rows' };

  const failures: { row: number; rejection: () => Promise<Rejection> }[] = [];
  checked.forEach((c, i) => {
    const at = row[`bad_${i}`] as number | null;
    if (at !== null) failures.push({ row: at, rejection: () => valueRejection(db, c.field, source, bounds, file, at) });
  });
  if (await keyHashRepeats(db, STAGE_TABLE, layout)) {
    const repeat = await firstRepeatedKey(db, layout);
    // a hash collision without a real repeat leaves `repeat` null
    if (repeat) failures.push({ row: repeat.row, rejection: async () => duplicateRejection(layout, file, repeat) });
  }
  // a snapshot's sum is judged only once its every row holds a weight
  if (failures.length === 0) {
    return layout.kind === 'benchmarks' ? unbalancedWeightsRejection(db, STAGE_TABLE, bounds.weightSumTolerance, file) : null;
  }
  const first = failures.reduce((a, b) => (b.row < a.row ? b : a));
  return first.rejection();
}

async function valueRejection(
  db: Database,
  field: FieldSpec,
  source: SourceConfig,
  bounds: Plausibility,
  file: string,
  row: number,
): Promise<Rejection> {
  const [hit] = await db.all<{ v: string | null; parsed: unknown }>(
    `select ${ident(textColumn(field))} as v, ${ident(field.name)} as parsed from ${STAGE_TABLE} where rowid = $1`,
    [row - 1],
  );
  const raw = hit?.v ?? null;
  return { code: 'bad_value', file, row, column: field.name, value: raw ?? '', ...explain(field, source, raw, hit?.parsed ?? null, bounds) };
}

interface RepeatedKey {
  row: number;
  firstRow: number;
  values: (string | null)[];
}

/** The earliest row whose key an earlier row of the file already had (keys compared as typed values). */
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
  const value = repeat.values.map((v) => JSON.stringify(v ?? '')).join(', ');
  return {
    code: 'duplicate_key',
    file,
    row: repeat.row,
    column: key,
    value,
    expected: `one row per ${key}`,
    message: `${value} repeats the ${key} of line ${fileLine({ row: repeat.firstRow })}`,
  };
}
