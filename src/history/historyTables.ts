import type { Logger } from 'pino';
import type { Database } from '../storage/database.ts';
import { KEPT_TABLES } from './keptTables.ts';

export interface Column {
  name: string;
  type: string;
}

/** A table's columns in order; empty when the table does not exist. */
export async function tableColumns(db: Database, table: string): Promise<Column[]> {
  return db.all<Column>(
    `select column_name as name, data_type as type from duckdb_columns()
     where database_name = current_database() and schema_name = 'main' and table_name = $1 order by column_index`,
    [table],
  );
}

/**
 * At every start, after the migrations: each kept table that exists gets its
 * `<table>_history` (created, or given the columns a later migration added to the table)
 * and its macro `<table>_asof(ts)`, re-created like the views. The history follows its
 * table's shape from here rather than from a migration of its own, so a column added to
 * a result table needs no second migration.
 */
export async function prepareHistory(db: Database, log: Logger): Promise<void> {
  for (const { table } of KEPT_TABLES) {
    const columns = await tableColumns(db, table);
    if (columns.length === 0) continue;
    await db.transaction(async () => {
      await matchHistoryColumns(db, table, columns);
      await db.run(asofMacro(table, columns));
    });
    log.debug({ stage: 'history', table }, 'history table and as-of macro ready');
  }
}

async function matchHistoryColumns(db: Database, table: string, columns: Column[]): Promise<void> {
  const history = `${table}_history`;
  await db.run(
    `create table if not exists ${history} (
       ${columns.map((c) => `${c.name} ${c.type}`).join(',\n       ')},
       valid_from      timestamptz not null,  -- the writing run's finish (risk_runs.finished_at)
       valid_to        timestamptz not null,  -- the replacing run's finish
       written_by_run  integer not null,
       replaced_by_run integer not null
     )`,
  );
  const present = new Set((await tableColumns(db, history)).map((c) => c.name));
  for (const c of columns.filter((col) => !present.has(col.name))) {
    // rows kept before the column existed hold null in it
    await db.run(`alter table ${history} add column ${c.name} ${c.type}`);
  }
}

/**
 * `<table>_asof(ts)`: the table as it stood at system time ts: its current rows written by
 * a run that finished at or before ts, and the kept rows that were current then. A run's
 * rows take effect at its finished_at, set in its write transaction, and the rows it
 * replaced carry the same instant as valid_to, so no row is current twice at any ts.
 */
function asofMacro(table: string, columns: Column[]): string {
  const list = columns.map((c) => c.name).join(', ');
  const ts = 'ts::timestamptz';
  return `create or replace macro ${table}_asof(ts) as table
    select ${list} from ${table}
    where run_id in (select run_id from risk_runs where status = 'done' and finished_at <= ${ts})
    union all
    select ${list} from ${table}_history
    where valid_from <= ${ts} and ${ts} < valid_to`;
}
