import type { Database } from '../storage/database.ts';
import { appendedSince, rawMarkSql } from '../storage/rawAppends.ts';

/** The raw tables whose rows say a security is held or a benchmark's constituent, with the column that must be non-zero. */
const SOURCES = [
  { table: 'positions', amount: 'quantity' },
  { table: 'benchmarks', amount: 'weight' },
] as const;

/**
 * Brings price_check_securities up to date with the raw positions and benchmarks: the
 * ids of the rows added since the recorded marks are added (raw rows are only ever
 * appended, so the list of the old rows stands); when a table changed otherwise (rows
 * gone) or nothing is recorded, the list is rebuilt from every row. One transaction.
 */
export async function refreshCheckedSecurities(db: Database): Promise<void> {
  const [{ marks }] = await db.all<{ marks: string }>(`select concat_ws('|', ${SOURCES.map((s) => rawMarkSql(s.table)).join(', ')}) as marks`);
  const recorded = await db.all<{ raw_marks: string }>('select raw_marks from price_check_securities_state');
  const before = recorded.length === 1 ? recorded[0].raw_marks.split('|') : null;
  if (before !== null && before.join('|') === marks) return;
  const now = marks.split('|');
  // per table, the highest file_id whose rows the list already reflects (-1: none); a table unchanged since is not read
  const reflected = new Map<string, number>();
  let rebuild = before === null || before.length !== SOURCES.length;
  for (const [i, source] of SOURCES.entries()) {
    if (rebuild || before![i] === now[i]) continue;
    if ((await appendedSince(db, source.table, before![i], now[i])) === null) rebuild = true;
    else reflected.set(source.table, Number(before![i].split(':')[1]));
  }
  const read = rebuild ? SOURCES.map((s) => ({ ...s, above: -1 })) : SOURCES.flatMap((s) => (reflected.has(s.table) ? [{ ...s, above: reflected.get(s.table)! }] : []));
  await db.transaction(async () => {
    if (rebuild) await db.run('delete from price_check_securities');
    // file ids as literals: a constant bound lets DuckDB skip the row groups of older deliveries
    if (read.length > 0) {
      await db.run(
        `insert into price_check_securities
         select distinct security_id from (
           ${read.map((s) => `select security_id from ${s.table} where file_id > ${Math.trunc(s.above)} and ${s.amount} <> 0 and not is_cash(security_id)`).join('\n           union all\n           ')}
         )
         except select security_id from price_check_securities`,
      );
    }
    await db.run('delete from price_check_securities_state');
    await db.run('insert into price_check_securities_state (raw_marks) values ($1)', [marks]);
  });
}
