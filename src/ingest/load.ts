import type { SourceConfig } from '../config/schema.ts';
import type { Database } from '../storage/database.ts';
import { ident, readCsvSql, typedSelect } from './csvSql.ts';
import type { Rejection } from '../errors.ts';
import type { HoldReason } from './completeness.ts';
import type { ColumnMapping } from './header.ts';
import { findIngested, recordFile, type EarlierDelivery, type FileRecord } from './ledger.ts';
import type { KindLayout } from './layout.ts';
import type { Plausibility } from './plausibility.ts';
import { badSql, keyHashRepeats, summaryOf, summarySelect, type FileSummary } from './rules.ts';
import { hasUnbalancedWeights } from './weightSums.ts';

export type LoadAttempt =
  | { kind: 'loaded'; sha256: string; fileId: number; summary: FileSummary }
  /** These bytes were loaded before: nothing of this attempt stays. */
  | { kind: 'known'; sha256: string; earlier: EarlierDelivery }
  /** The rows are readable but suspect (`guard` said why): rolled back, the file stays in the inbox. */
  | { kind: 'held'; sha256: string; hold: HoldReason }
  /** The rows are readable but not what the sender stated (`guard` said why): rolled back, to quarantine. */
  | { kind: 'refused'; sha256: string; rejection: Rejection }
  /** A row broke a rule, a key repeats, there are no rows or DuckDB could not read it: rolled back. */
  | { kind: 'failed'; sha256: string; cause: unknown };

/** What a guard says of a file's inserted rows before the commit: nothing, hold the file back, or refuse it. */
export type GuardVerdict = null | { kind: 'held'; hold: HoldReason } | { kind: 'refused'; rejection: Rejection };

/** Looks at the inserted rows (by file_id), the bytes' hash and the row count before the commit. */
export type CommitGuard = (fileId: number, sha256: string, rows: number) => Promise<GuardVerdict>;

export type LoadRecord = Omit<FileRecord, 'fileId' | 'sha256' | 'rows' | 'status' | 'error' | 'minDate' | 'maxDate' | 'duplicateOf'>;

/** The connection-local table a file is read into on its way to the raw table; dropped after the load. */
const LOAD_TABLE = 'ingest_load';

/** Unwinds the transaction (ROLLBACK) carrying the attempt's outcome. */
class Abort extends Error {
  constructor(readonly attempt: LoadAttempt) {
    super(attempt.kind);
  }
}

/**
 * The whole load in one read of the file and ONE transaction: read_csv fills a
 * temporary table with the typed rows; one scan of it gives the file's summary (count,
 * dates, portfolios) and whether any row breaks a rule (ids included), a sorted pass over
 * the keys' hashes finds a repeated key; only a file that passes them opens the
 * transaction, where its rows are copied into the raw table as they are, then the
 * duplicate check on the file's sha256 (computed meanwhile in this thread), the guard
 * and the `ingested_files` row. Anything wrong leaves the raw tables untouched and the
 * caller finds out which row it was; a good file, the common case, costs one read.
 */
export async function loadFile(
  db: Database,
  filePath: string,
  source: SourceConfig,
  layout: KindLayout,
  mapping: ColumnMapping,
  bounds: Plausibility,
  hashing: Promise<string>,
  record: LoadRecord,
  guard: CommitGuard = async () => null,
): Promise<LoadAttempt> {
  try {
    // read_csv ... with ordinality reads on one thread; CREATE TABLE AS reads in parallel
    // and keeps the file's order, so rowid + 1 is the row (outside a transaction only:
    // inside one, new rows' rowids start at a large offset)
    await db.run(`create or replace temp table ${LOAD_TABLE} as select ${typedSelect(layout, source, mapping).join(', ')} from ${readCsvSql(filePath, source, mapping)}`);
  } catch (cause) {
    return { kind: 'failed', sha256: await hashing, cause };
  }
  try {
    const summary = await checkStaged(db, layout, bounds);
    if (summary === null) return { kind: 'failed', sha256: await hashing, cause: null };
    return await db.transaction(() => insertStaged(db, layout, summary, hashing, record, guard));
  } catch (err) {
    if (err instanceof Abort) return err.attempt;
    throw err;
  } finally {
    await db.run(`drop table if exists ${LOAD_TABLE}`);
  }
}

/**
 * Every rule of the file over the staged rows, before anything is written: the rows'
 * values and ids (one scan, with the summary), at least one row, no repeated key, and a
 * benchmark snapshot's weights adding up. The summary of a file that passes; null for one
 * that does not (the diagnosis then finds which row it was).
 */
async function checkStaged(db: Database, layout: KindLayout, bounds: Plausibility): Promise<FileSummary | null> {
  const { summary, bad } = await summarizeStaged(db, layout, bounds);
  if (bad || summary.rows === 0) return null;
  if ((await keyHashRepeats(db, LOAD_TABLE, layout)) && (await keyRepeats(db, layout))) return null;
  if (layout.kind === 'benchmarks' && (await hasUnbalancedWeights(db, LOAD_TABLE, bounds.weightSumTolerance))) return null;
  return summary;
}

/** Inside the load's transaction: the checked rows into the raw table, the duplicate check, the guard and the ledger row. */
async function insertStaged(
  db: Database,
  layout: KindLayout,
  summary: FileSummary,
  hashing: Promise<string>,
  record: LoadRecord,
  guard: CommitGuard,
): Promise<LoadAttempt> {
  const [{ id }] = await db.all<{ id: number }>(`select nextval('file_id_seq')::integer as id`);
  const columns = layout.fields.map((f) => ident(f.name)).join(', ');
  try {
    await db.run(`insert into ${layout.table} (file_id, line, ${columns}) select $1, rowid + 1, ${columns} from ${LOAD_TABLE}`, [id]);
  } catch (cause) {
    throw new Abort({ kind: 'failed', sha256: await hashing, cause });
  }
  const sha256 = await hashing;
  const earlier = await findIngested(db, sha256);
  if (earlier) throw new Abort({ kind: 'known', sha256, earlier });
  const verdict = await guard(id, sha256, summary.rows);
  if (verdict) throw new Abort({ ...verdict, sha256 });
  await recordFile(db, {
    ...record,
    fileId: id,
    sha256,
    rows: summary.rows,
    status: 'ingested',
    error: null,
    minDate: summary.minDate,
    maxDate: summary.maxDate,
    duplicateOf: null,
  });
  return { kind: 'loaded', sha256, fileId: id, summary };
}

/**
 * The file's summary and whether a row breaks a rule, in one scan of the staged rows.
 * Ids repeat on nearly every row, and their rule holds a regular expression (printable
 * characters): it runs once per distinct id of the file (their lists, gathered in the
 * same scan as the summary) instead of once per row. list() leaves nulls out: counted apart.
 */
async function summarizeStaged(db: Database, layout: KindLayout, bounds: Plausibility): Promise<{ summary: FileSummary; bad: boolean }> {
  const ids = layout.fields.filter((f) => f.type === 'id');
  const values = layout.fields.flatMap((f) => {
    const bad = f.type === 'id' ? null : badSql(f, bounds);
    return bad === null ? [] : [`(${bad})`];
  });
  const gathered = ids.flatMap((f, i) => [`list(distinct ${ident(f.name)}) as ids_${i}`, `count(*) - count(${ident(f.name)}) as nulls_${i}`]);
  const badValues = values.length > 0 ? [`count(*) filter (where ${values.join(' or ')}) as bad_values`] : ['0 as bad_values'];
  const badIds = ids.map((f, i) => `nulls_${i} > 0 or exists (select 1 from (select unnest(ids_${i}) as ${ident(f.name)}) where ${badSql(f, bounds)})`);
  const [row] = await db.all<Record<string, unknown>>(
    `select n_rows, min_date, max_date, portfolios, bad_values > 0 ${badIds.map((b) => ` or ${b}`).join('')} as bad
     from (select ${[...summarySelect(layout), ...gathered, ...badValues].join(', ')} from ${LOAD_TABLE})`,
  );
  return { summary: summaryOf(row), bad: row.bad === true };
}

/** The exact test behind a repeated key hash (which a hash collision could also cause). */
async function keyRepeats(db: Database, layout: KindLayout): Promise<boolean> {
  const keys = layout.key.map(ident).join(', ');
  const rows = await db.all(`select 1 from ${LOAD_TABLE} group by ${keys} having count(*) > 1 limit 1`);
  return rows.length > 0;
}
