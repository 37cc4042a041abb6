import type { Database } from './database.ts';

/**
 * How a reader of a raw table (prices, positions, fx_rates, benchmarks: rows are only
 * ever added, each with the file_id of its delivery, later files higher) knows what was
 * added since it last looked: it keeps the table's mark, `rows:highest file_id`.
 */

/** SQL giving a raw table's mark, `rows:highest file_id` (count(*) comes from metadata). */
export const rawMarkSql = (table: string) => `(select count(*) || ':' || coalesce(max(file_id), 0) from ${table})`;

/**
 * What `table` gained since its mark was `before`: the earliest date of the rows with a
 * file_id above the old highest (null: none), or null when it changed otherwise (rows
 * gone, an unreadable mark) and only a reader starting over is right.
 */
export async function appendedSince(db: Database, table: string, before: string, now: string): Promise<{ first: string | null } | null> {
  const old = parseMark(before);
  const current = parseMark(now);
  if (old === null || current === null) return null;
  const [{ added, first }] = await db.all<{ added: string; first: string | null }>(
    `select count(*) as added, min(date)::varchar as first from ${table} where file_id > $1`,
    [old.maxFile],
  );
  return current.rows === old.rows + Number(added) ? { first } : null;
}

function parseMark(mark: string): { rows: number; maxFile: number } | null {
  const parts = mark.split(':').map(Number);
  return parts.length === 2 && parts.every((x) => Number.isSafeInteger(x)) ? { rows: parts[0], maxFile: parts[1] } : null;
}
