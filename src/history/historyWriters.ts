import type { RunWriter } from '../batch/runWriters.ts';
import { faultPoint } from '../faults.ts';
import type { Database } from '../storage/database.ts';
import { KEPT_TABLES, type KeptTable } from './keptTables.ts';

/**
 * The two writers that keep superseded rows. `HOLD_BEFORE` runs first in the run's
 * transaction and copies the rows the writers may change into temporary tables;
 * `KEEP_REPLACED` runs after them and moves every held row that is no longer in its table
 * exactly (deleted, or rewritten with other figures or another run_id) into the history,
 * current from its run's finish to this run's. Both run inside the run's one transaction:
 * a run that fails or is killed leaves neither its rows nor their history behind.
 */

const held = (table: string) => `history_held_${table}`;

/**
 * The kept tables present in this database with their history (var_daily only once its
 * migration ran), each with its columns in order: one catalog query, as duckdb_columns()
 * lists every column of every table and view, which costs about as much each time.
 */
async function presentTables(tx: Database): Promise<{ kept: KeptTable; columns: string[] }[]> {
  const rows = await tx.all<{ name: string; columns: string[] }>(
    `select table_name as name, list(column_name order by column_index) as columns from duckdb_columns()
     where database_name = current_database() and schema_name = 'main' and list_contains(from_json($1, '["VARCHAR"]'), table_name)
     group by table_name`,
    [JSON.stringify(KEPT_TABLES.flatMap((k) => [k.table, `${k.table}_history`]))],
  );
  const columns = new Map(rows.map((r) => [r.name, r.columns]));
  return KEPT_TABLES.filter((k) => columns.has(k.table) && columns.has(`${k.table}_history`)).map((kept) => ({ kept, columns: columns.get(kept.table)! }));
}

export const HOLD_BEFORE: RunWriter = {
  name: 'history_hold',
  async write(tx, run) {
    for (const { kept } of await presentTables(tx)) {
      await tx.run(`create or replace temp table ${held(kept.table)} as select * from ${kept.table} where ${kept.reach(run)}`);
    }
  },
};

export const KEEP_REPLACED: RunWriter = {
  name: 'history_keep',
  async write(tx, run) {
    for (const { kept, columns } of await presentTables(tx)) {
      // a held row still in its table is still within reach, so the reach bounds the scan;
      // now() is the transaction's start: the same instant markRunDone gives finished_at;
      // a row whose run is not recorded (loaded by hand) counts as current since always
      await tx.run(
        `insert into ${kept.table}_history (${columns.join(', ')}, valid_from, valid_to, written_by_run, replaced_by_run)
         select ${columns.map((c) => `gone.${c}`).join(', ')}, coalesce(r.finished_at, '-infinity'::timestamptz), now(), gone.run_id, $1
         from (select * from ${held(kept.table)} except all select * from ${kept.table} where ${kept.reach(run)}) gone
         left join risk_runs r on r.run_id = gone.run_id`,
        [run.runId],
      );
      await tx.run(`drop table ${held(kept.table)}`);
    }
    faultPoint('kept');
  },
};

/**
 * With `history.keepDays`, history rows replaced longer ago than that are deleted, in the
 * run's transaction, and each deletion recorded in history_prunes (so an as-of query for
 * an earlier time can be known to be incomplete).
 */
export const PRUNE_HISTORY: RunWriter = {
  name: 'history_prune',
  async write(tx, run) {
    const keepDays = run.config.history.keepDays;
    if (keepDays === null) return;
    for (const { kept: { table } } of await presentTables(tx)) {
      const [{ n }] = await tx.all<{ n: number }>(
        `select count(*)::integer as n from ${table}_history where valid_to < now() - to_days($1::integer)`,
        [keepDays],
      );
      if (n === 0) continue;
      await tx.run(`delete from ${table}_history where valid_to < now() - to_days($1::integer)`, [keepDays]);
      await tx.run(
        `insert into history_prunes (table_name, cutoff, rows, run_id) values ($1, now() - to_days($2::integer), $3, $4)`,
        [`${table}_history`, keepDays, n, run.runId],
      );
    }
  },
};
