import { existsSync, mkdirSync } from 'node:fs';
import path from 'node:path';
import type { Logger } from 'pino';
import type { Config } from '../config/load.ts';
import { RiskfoldError } from '../errors.ts';
import { openDatabase, type Database } from './database.ts';
import { prepareHistory } from '../history/historyTables.ts';
import { lockDownReader } from './readerSandbox.ts';
import { refreshDerived } from './derived.ts';
import { applyMigrations, applyViews, missingMigrations } from './sqlFiles.ts';

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
        `insert into pipeline_settings (base_currency, max_stale_days, trading_days_per_year, windows, history_days, positions_max_age_days)
         values ($1, $2, $3, $4::integer[], $5::integer[], $6)`,
        [
          config.baseCurrency,
          config.risk.maxStaleDays,
          config.risk.tradingDaysPerYear,
          `[${config.risk.windows.join(',')}]`,
          `[${historyDays(config).join(',')}]`,
          config.checks.positionsMaxAgeDays,
        ],
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
