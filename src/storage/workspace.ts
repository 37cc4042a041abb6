import { execFile } from 'node:child_process';
import { existsSync, mkdirSync, renameSync, rmSync } from 'node:fs';
import { faultPoint } from '../faults.ts';
import path from 'node:path';
import { promisify } from 'node:util';
import type { Logger } from 'pino';
import type { Config } from '../config/load.ts';
import { RiskfoldError } from '../errors.ts';
import { openDatabase, type Database } from './database.ts';
import { prepareHistory } from '../history/historyTables.ts';
import { lockDownReader } from './readerSandbox.ts';
import { refreshDerived } from './derived.ts';
import { bytesToPublish, freeBytes, sizeOrZero } from './diskRoom.ts';
import { applyMigrations, applyViews, missingMigrations } from './sqlFiles.ts';

const execFileAsync = promisify(execFile);

/**
 * Opens the worker's database for writing: migrations once, settings from the config,
 * views re-applied. Only one process can hold it; a second gets `database_locked`.
 */
export async function openWorkspace(config: Config, log: Logger): Promise<Database> {
  for (const dir of [config.inbox, config.archive, config.quarantine, path.dirname(config.database)]) {
    mkdirSync(dir, { recursive: true });
  }
  const db = await openDatabase(config.database, { engine: config.engine });
  try {
    await applyMigrations(db, log);
    await db.transaction(async () => {
      await db.run('delete from pipeline_settings');
      await db.run(
        `insert into pipeline_settings (base_currency, max_stale_days, trading_days_per_year, windows, history_days)
         values ($1, $2, $3, $4::integer[], $5::integer[])`,
        [config.baseCurrency, config.risk.maxStaleDays, config.risk.tradingDaysPerYear, `[${config.risk.windows.join(',')}]`, `[${historyDays(config).join(',')}]`],
      );
    });
    await applyViews(db, log);
    await prepareHistory(db, log);
    // raw tables changed while no worker ran (an outside client, a crash) are caught here
    await refreshDerived(db, log);
  } catch (err) {
    db.close();
    throw err;
  }
  return db;
}

/**
 * The consecutive daily returns each risk_daily estimate needs before a security counts
 * as covered (hasFullHistory in src/risk/inputs/panels.ts): its window, or the EWMA's
 * seed. check_data_quality reads them to flag a held security short of any.
 */
function historyDays(config: Config): number[] {
  const needs = [...config.risk.windows, ...(config.risk.ewma.enabled ? [config.risk.ewma.seedDays] : [])];
  return [...new Set(needs)].sort((a, b) => a - b);
}

/** Whether the read copy now holds the latest commit; if not, why, in one line. */
export type PublishOutcome = { published: true } | { published: false; reason: string };

/**
 * Publishes the read copy: checkpoint, copy to a temporary name, rename over the old
 * copy. Readers of the old copy keep their open file; a reader never sees a half-written
 * copy. Needs room for one copy (`bytesToPublish`): when the disk has less, the old copy
 * goes first if that makes room (readers find no copy until the rename), else nothing
 * is touched and the outcome says why; the commits are safe either way and the next
 * publish catches up. Call only between transactions (the worker's queue guarantees it).
 */
export async function publishReadCopy(db: Database, config: Config, log: Logger): Promise<PublishOutcome> {
  // force: wait for a short write on another connection (alert delivery) instead of failing
  await db.run('force checkpoint');
  const short = makeRoom(config, log);
  if (short !== null) return { published: false, reason: short };
  const tmp = `${config.readCopy}.tmp-${process.pid}`;
  try {
    await copyInChildProcess(config.database, tmp);
    faultPoint('copied');
    renameSync(tmp, config.readCopy);
  } catch (err) {
    rmSync(tmp, { force: true }); // a full disk must not leave a stray copy behind
    if (err instanceof CopyFailed && err.noSpace) return { published: false, reason: `read copy not published: ${err.message}; ${COMMITTED}` };
    throw err;
  }
  rmSync(`${config.readCopy}.wal`, { force: true });
  log.debug({ stage: 'storage', readCopy: config.readCopy }, 'read copy published');
  return { published: true };
}

/** Null when a copy fits (dropping the old one if that is what it takes); else the one-line reason it does not. */
function makeRoom(config: Config, log: Logger): string | null {
  const dir = path.dirname(config.readCopy);
  const needed = bytesToPublish(sizeOrZero(config.database));
  let free = freeBytes(dir, config.readCopy);
  if (free >= needed) return null;
  const old = sizeOrZero(config.readCopy);
  if (old > 0 && free + old >= needed) {
    rmSync(config.readCopy, { force: true });
    rmSync(`${config.readCopy}.wal`, { force: true });
    log.warn({ stage: 'storage', readCopy: config.readCopy, freeBytes: free, neededBytes: needed }, 'disk short: old read copy removed to make room for the new one');
    // a reader still holding the old copy keeps its blocks until it closes it
    free = freeBytes(dir, config.readCopy);
    if (free >= needed) return null;
  }
  return `read copy not published: ${mib(free)} free in ${dir}, a copy of the database needs ${mib(needed)}; ${COMMITTED}`;
}

const COMMITTED = 'everything is committed, the copy follows once there is room';
const mib = (bytes: number) => `${Math.max(0, Math.floor(bytes / 1024 / 1024))} MiB`;

/** The copy failed; `noSpace` when the disk (or a quota) filled up under it. */
class CopyFailed extends Error {
  constructor(
    message: string,
    readonly noSpace: boolean,
  ) {
    super(message);
  }
}

/**
 * DuckDB's lock on its file is a POSIX record lock, and the kernel drops such a lock when
 * the owning process closes ANY descriptor of that file: a copyFileSync here would end
 * the worker's lock and let a second writer in. A child's open and close leave it alone;
 * it reports a failure as the error's code and message on one line.
 */
async function copyInChildProcess(from: string, to: string): Promise<void> {
  try {
    await execFileAsync(process.execPath, ['-e', COPY_SCRIPT, from, to]);
  } catch (err) {
    const said = String((err as { stderr?: unknown }).stderr ?? '').trim();
    const [code = '', ...rest] = said.split(' ');
    const detail = rest.join(' ') || (err as Error).message.split('\n')[0];
    throw new CopyFailed(`copying ${from} to ${to} failed: ${detail}`, code === 'ENOSPC' || code === 'EDQUOT');
  }
}

// COPYFILE_FICLONE: a reflink where the file system has them (XFS, Btrfs, APFS), so the
// copy costs no time whatever the database's size; elsewhere (ext4) a plain copy
const COPY_SCRIPT = `try { const fs = require("node:fs"); fs.copyFileSync(process.argv[1], process.argv[2], fs.constants.COPYFILE_FICLONE); }
catch (e) { process.stderr.write(String(e.code) + " " + String(e.message).split("\\n")[0]); process.exit(1); }`;

export interface ReadHandle {
  db: Database;
  /** 'database' when the primary file was free, 'read_copy' while a worker holds it. */
  source: 'database' | 'read_copy';
}

/**
 * Opens history for reading without ever blocking the worker: the primary file if free,
 * else the read copy; either way locked down to the database itself (plus `readableDirs`).
 */
export async function openForReading(config: Config, readableDirs: readonly string[] = []): Promise<ReadHandle> {
  const handle = await openEither(config);
  try {
    await requireCurrentSchema(handle, config);
    await lockDownReader(handle.db, readableDirs);
  } catch (err) {
    handle.db.close();
    throw err;
  }
  return handle;
}

/**
 * Readers open read-only and so cannot upgrade a database written by an older riskfold:
 * its views and macros would fail with a catalog error. Say what to run instead.
 */
async function requireCurrentSchema(handle: ReadHandle, config: Config): Promise<void> {
  const missing = await missingMigrations(handle.db);
  if (missing.length === 0) return;
  const file = handle.source === 'database' ? config.database : config.readCopy;
  throw new RiskfoldError(
    'schema_outdated',
    `${file} was written by an older riskfold (missing ${missing.join(', ')}): run "riskfold ingest" once (or restart "riskfold watch") so the worker upgrades it, then read again`,
    { file },
  );
}

async function openEither(config: Config): Promise<ReadHandle> {
  if (!existsSync(config.database)) {
    throw new RiskfoldError('not_found', `${config.database} does not exist yet: run "riskfold ingest" or "riskfold watch" first`);
  }
  try {
    return { db: await openDatabase(config.database, { readOnly: true, engine: config.engine }), source: 'database' };
  } catch (err) {
    if (!(err instanceof RiskfoldError && err.kind === 'database_locked')) throw err;
    if (!existsSync(config.readCopy)) {
      throw new RiskfoldError('database_locked', `${config.database} is held by the worker and there is no read copy at ${config.readCopy} (none published yet, or the disk was too full to publish: see the worker's log)`);
    }
    return { db: await openDatabase(config.readCopy, { readOnly: true, engine: config.engine }), source: 'read_copy' };
  }
}
