import type { Logger } from 'pino';
import type { Database } from './database.ts';
import { LADDER_DIR, listLadder } from './sqlFiles.ts';

/**
 * The derived tables (migration 0030) store the layers every view shares: snapshots in
 * force, the valuation calendar, carried prices and fx rates; the ladder's stored steps
 * (sql/ladder/NNN_<layer>_stored_<stem>.sql) fill them. They are rebuilt from the
 * raw tables whenever the raw tables' fingerprint differs from the one recorded with
 * them, so whoever changed the raw tables (ingest, a test, an outside client, a crash
 * half way) the views never read a layer older than its inputs once this has run.
 */

/** Rows and highest file_id of each raw table the derived layers read (count(*) comes from metadata), and the held suspect prices. */
const FINGERPRINT_SQL = `
  select concat_ws('|',
    (select count(*) || ':' || coalesce(max(file_id), 0) from prices),
    (select count(*) || ':' || coalesce(max(file_id), 0) from positions),
    (select count(*) || ':' || coalesce(max(file_id), 0) from fx_rates),
    (select count(*) || ':' || coalesce(max(file_id), 0) from benchmarks),
    -- prices held out of risk: a flag raised, cleared or switched to hold changes the carried prices
    (select count(*) || ':' || count(*) filter (where held and cleared_at is null) from price_checks)) as fingerprint`;

export interface DerivedRefresh {
  rebuilt: boolean;
  seconds: number;
}

/**
 * Brings the derived tables up to date with the raw tables: nothing to do when the
 * fingerprint matches, else each stored step's table is emptied and refilled in ladder
 * order (a step reads only the views and tables of the steps before it). Readers never
 * see a half-done refresh: the worker calls this before its recompute and publishes the
 * read copy after it. Call between transactions (it opens its own).
 */
export async function refreshDerived(db: Database, log?: Logger, dir = LADDER_DIR): Promise<DerivedRefresh> {
  const started = performance.now();
  const [{ fingerprint }] = await db.all<{ fingerprint: string }>(FINGERPRINT_SQL);
  const recorded = await db.all<{ raw_fingerprint: string }>('select raw_fingerprint from derived_state');
  if (recorded.length === 1 && recorded[0].raw_fingerprint === fingerprint) {
    return { rebuilt: false, seconds: (performance.now() - started) / 1000 };
  }
  // forget the old fingerprint first: a crash half way leaves no record, so the next call rebuilds
  await db.run('delete from derived_state');
  // one transaction per layer: reading a layer back inside the transaction that wrote it
  // was 100x slower (273 s against 2 s at two years' size, measured)
  for (const step of listLadder(dir).filter((s) => s.kind === 'stored')) {
    try {
      await db.transaction(async () => {
        await db.run(`delete from ${step.object}`);
        await db.run(step.text);
      });
    } catch (cause) {
      throw new Error(`stored step ${step.file} failed`, { cause });
    }
  }
  await db.run('insert into derived_state (raw_fingerprint) values ($1)', [fingerprint]);
  const seconds = (performance.now() - started) / 1000;
  log?.info({ stage: 'storage', seconds: Number(seconds.toFixed(3)), fingerprint }, 'derived tables rebuilt');
  return { rebuilt: true, seconds };
}
