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
import { applyMigrations, applyViews } from './sqlFiles.ts';

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
      await db.run('insert into pipeline_settings values ($1, $2, $3, $4::integer[])', [
        config.baseCurrency,
        config.risk.maxStaleDays,
        config.risk.tradingDaysPerYear,
        `[${config.risk.windows.join(',')}]`,
      ]);
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
 * Publishes the read copy: checkpoint, copy to a temporary name, rename over the old
 * copy. Readers of the old copy keep their open file; a reader never sees a half-written
 * copy. Call only between transactions (the worker's queue guarantees it).
 */
export async function publishReadCopy(db: Database, config: Config, log: Logger): Promise<void> {
  // force: wait for a short write on another connection (alert delivery) instead of failing
  await db.run('force checkpoint');
  const tmp = `${config.readCopy}.tmp-${process.pid}`;
  try {
    await copyInChildProcess(config.database, tmp);
    faultPoint('copied');
    renameSync(tmp, config.readCopy);
  } catch (err) {
    rmSync(tmp, { force: true }); // a full disk must not leave a stray copy behind
    throw err;
  }
  rmSync(`${config.readCopy}.wal`, { force: true });
  log.debug({ stage: 'storage', readCopy: config.readCopy }, 'read copy published');
}

/**
 * DuckDB's lock on its file is a POSIX record lock, and the kernel drops such a lock when
 * the owning process closes ANY descriptor of that file: a copyFileSync here would end
 * the worker's lock and let a second writer in. A child's open and close leave it alone.
 */
async function copyInChildProcess(from: string, to: string): Promise<void> {
  await execFileAsync(process.execPath, ['-e', 'require("node:fs").copyFileSync(process.argv[1], process.argv[2])', from, to]);
}

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
    await lockDownReader(handle.db, readableDirs);
  } catch (err) {
    handle.db.close();
    throw err;
  }
  return handle;
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
      throw new RiskfoldError('database_locked', `${config.database} is held by the worker and no read copy exists yet at ${config.readCopy}`);
    }
    return { db: await openDatabase(config.readCopy, { readOnly: true, engine: config.engine }), source: 'read_copy' };
  }
}
