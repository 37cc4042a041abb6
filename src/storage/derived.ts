import type { Logger } from 'pino';
import type { Database } from './database.ts';
import { appendedSince, rawMarkSql } from './rawAppends.ts';
import { LADDER_DIR, listLadder } from './sqlFiles.ts';

/**
 * The derived tables (migrations 0030, 0080, 0240, 0250) store the layers every view shares:
 * snapshots in force, the securities ever held, the valuation calendar, carried prices
 * and fx rates, position values and weights, security and portfolio returns; the ladder's stored steps
 * (sql/ladder/NNN_<layer>_stored_<stem>.sql) fill them. They are brought up to date
 * whenever the raw tables' fingerprint differs from the one recorded with them, so
 * whoever changed the raw tables (ingest, a test, an outside client, a crash half way)
 * the views never read a layer older than its inputs once this has run.
 */

/** The raw tables the derived layers read, each with a `date` and the `file_id` of its delivery. */
const RAW_TABLES = ['prices', 'positions', 'fx_rates', 'benchmarks'] as const;

/** The suspect prices held out of risk (open, held): the carried prices skip them. */
const HELD_OUT_SQL = 'select distinct security_id, date from price_checks where held and cleared_at is null';

/**
 * The settings the stored position values and portfolio returns (steps 155, 175) apply:
 * a change rebuilds in full. The securities' currencies they apply too are followed by
 * the securities' mark.
 */
const VALUATION_SQL = `coalesce((select base_currency || ':' || max_stale_days from pipeline_settings), '')`;

/** The securities whose currency differs from the one the stored values applied (step 156 kept them). */
const CURRENCY_CHANGED_SQL = `
  with now_currencies as (select security_id, currency from clean_securities),
  changed as (
    (select * from now_currencies except select * from derived_security_currencies)
    union all
    (select * from derived_security_currencies except select * from now_currencies)
  )
  select min(h.first_held_on)::varchar as first
  from derived_held_securities h
  semi join changed c on c.security_id = h.security_id`;

/**
 * Rows and highest file_id of each raw table, `rows:max` (count(*) comes from metadata),
 * then the held suspect prices: count of checks, count and sum of ids of those held out
 * (a flag raised, cleared or switched to hold changes that part), then the valuation's
 * settings and the securities' mark.
 */
const FINGERPRINT_SQL = `
  select concat_ws('|',
    ${RAW_TABLES.map(rawMarkSql).join(',\n    ')},
    (select count(*) || ':' || count(*) filter (where held and cleared_at is null) || ':' || coalesce(sum(check_id) filter (where held and cleared_at is null), 0)
     from price_checks),
    ${VALUATION_SQL},
    ${rawMarkSql('securities')}) as fingerprint`;

export interface DerivedRefresh {
  /** 'current': nothing to do; 'from': refilled from `from` on; 'full': rebuilt. */
  mode: 'current' | 'from' | 'full';
  /** 'YYYY-MM-DD' with mode 'from', else null. */
  from: string | null;
  seconds: number;
}

/**
 * Brings the derived tables up to date with the raw tables. When the only change since
 * the recorded fingerprint is rows appended by later deliveries (new days, or
 * corrections: a later file supersedes by key), the stored steps refill from the
 * earliest date those rows carry, keeping every row before it; anything else (rows
 * gone, no record) rebuilds in full. Each stored step, in ladder order, runs in its own
 * transaction with the variables derived_from and derived_carry_from set. Readers never
 * see a half-done refresh: the worker calls this before its recompute and publishes the
 * read copy after it. Call between transactions.
 */
export async function refreshDerived(db: Database, log?: Logger, dir = LADDER_DIR): Promise<DerivedRefresh> {
  const started = performance.now();
  const [{ fingerprint }] = await db.all<{ fingerprint: string }>(FINGERPRINT_SQL);
  const recorded = await db.all<{ raw_fingerprint: string }>('select raw_fingerprint from derived_state');
  const before = recorded.length === 1 ? recorded[0].raw_fingerprint : null;
  if (before === fingerprint) return { mode: 'current', from: null, seconds: (performance.now() - started) / 1000 };
  const reach = before === null ? FULL : await changedFrom(db, before, fingerprint);
  if (reach === NOTHING) {
    // the checks changed but not which prices they hold out
    await db.transaction(async () => {
      await db.run('delete from derived_state');
      await db.run('insert into derived_state (raw_fingerprint) values ($1)', [fingerprint]);
    });
    return { mode: 'current', from: null, seconds: (performance.now() - started) / 1000 };
  }
  const from = reach === FULL ? null : reach;
  // forget the old fingerprint first: a crash half way leaves no record, so the next call rebuilds
  await db.run('delete from derived_state');
  const dateLiteral = (d: string | null) => (d === null ? `'-infinity'::date` : `date '${d}'`);
  await db.run(`set variable derived_from = ${dateLiteral(from)}`);
  const [{ carry }] = await db.all<{ carry: string | null }>(
    `select max(date)::varchar as carry from derived_valuation_dates where date < getvariable('derived_from')`,
  );
  await db.run(`set variable derived_carry_from = ${carry === null ? 'null::date' : dateLiteral(carry)}`);
  // one transaction per layer: reading a layer back inside the transaction that wrote it
  // was 100x slower (273 s against 2 s at two years' size, measured)
  for (const step of listLadder(dir).filter((s) => s.kind === 'stored')) {
    try {
      await db.transaction(() => db.run(step.text));
    } catch (cause) {
      throw new Error(`stored step ${step.file} failed`, { cause });
    }
  }
  await db.run('insert into derived_state (raw_fingerprint) values ($1)', [fingerprint]);
  const seconds = (performance.now() - started) / 1000;
  const mode = from === null ? 'full' : 'from';
  log?.info({ stage: 'storage', mode, from, seconds: Number(seconds.toFixed(3)), fingerprint }, 'derived tables refreshed');
  return { mode, from, seconds };
}

const FULL = Symbol('full rebuild');
const NOTHING = Symbol('nothing to refill');

/**
 * The earliest date the derived tables must be refilled from: that of the rows delivered
 * since `before`, of the prices whose hold changed since the last refresh (step 085
 * stored them) and of the securities whose currency changed (step 156 stored them). FULL when a raw table changed other than by such rows (each must hold
 * exactly its old rows plus those with a higher file_id) or the valuation's settings
 * changed, and only a full rebuild is safe;
 * NOTHING when no date is affected.
 */
async function changedFrom(db: Database, before: string, now: string): Promise<string | typeof FULL | typeof NOTHING> {
  const old = before.split('|');
  const current = now.split('|');
  const held = RAW_TABLES.length;
  const valuation = held + 1;
  const securities = held + 2;
  if (old.length !== securities + 1 || old[valuation] !== current[valuation]) return FULL;
  const firsts: (string | null)[] = [];
  for (const [i, table] of RAW_TABLES.entries()) {
    if (old[i] === current[i]) continue;
    const added = await appendedSince(db, table, old[i], current[i]);
    if (added === null || added.first === null) return FULL;
    firsts.push(added.first);
  }
  if (old[held] !== current[held]) {
    const [{ first }] = await db.all<{ first: string | null }>(
      `with now_held as (${HELD_OUT_SQL}),
       changed as (
         (select * from now_held except select * from derived_held_out_prices)
         union all
         (select * from derived_held_out_prices except select * from now_held)
       )
       select min(date)::varchar as first from changed`,
    );
    firsts.push(first);
  }
  if (old[securities] !== current[securities]) {
    // a security first held on a date gets its currency's values from then on; one held
    // for the first time in these deliveries is refilled from their date already
    const [{ first }] = await db.all<{ first: string | null }>(CURRENCY_CHANGED_SQL);
    firsts.push(first);
  }
  const dates = firsts.filter((d): d is string => d !== null).sort();
  return dates.length === 0 ? NOTHING : dates[0];
}
