import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import type { Logger } from 'pino';
import { resolveConfig, type Config } from '../../src/config/load.ts';
import type { ConfigInput } from '../../src/config/schema.ts';
import { memoryLogger } from '../../src/log/logger.ts';
import type { Database } from '../../src/storage/database.ts';
import { openWorkspace } from '../../src/storage/workspace.ts';

export interface TempWorkspace {
  /** The mkdtemp folder; inbox/, archive/, quarantine/ and the database live inside. */
  dir: string;
  config: Config;
  /** The opened workspace (migrations, settings and views applied). */
  db: Database;
  log: Logger;
  /** Parsed log lines written so far through `log`. */
  logLines: () => Record<string, unknown>[];
  /** Closes the database (to let another process open it); safe to call twice. */
  closeDb: () => void;
  /** Closes the database and removes the folder; safe to call twice. */
  cleanup: () => void;
}

/** The minimal config of SPEC section 6; `overrides` replace top-level keys. */
export const MINIMAL_CONFIG: ConfigInput = {
  inbox: 'inbox',
  archive: 'archive',
  quarantine: 'quarantine',
  database: 'riskfold.duckdb',
  risk: { windows: [63], tradingDaysPerYear: 252 },
  limits: [{ portfolio: '*', window: 63, limit: 0.15 }],
  alerts: { file: 'alerts.jsonl' },
};

export interface ConfigFolder {
  dir: string;
  configPath: string;
  config: Config;
}

/** A fresh mkdtemp folder with `raw` written to pipeline.config.json there (so CLI runs can use it) and resolved. */
function configFolder(prefix: string, raw: ConfigInput): ConfigFolder {
  const dir = mkdtempSync(path.join(tmpdir(), prefix));
  const configPath = path.join(dir, 'pipeline.config.json');
  writeFileSync(configPath, `${JSON.stringify(raw, null, 2)}\n`);
  return { dir, configPath, config: resolveConfig(raw, configPath) };
}

/**
 * A fresh folder with a resolved config and an opened workspace database (migrations,
 * settings and views applied). The config is `base` (the minimal config unless given)
 * with `overrides` replacing top-level keys. Call `cleanup()` in afterEach.
 */
export async function tempWorkspace(overrides: Partial<ConfigInput> = {}, base: ConfigInput = MINIMAL_CONFIG): Promise<TempWorkspace> {
  const { dir, config } = configFolder('riskfold-test-', { ...base, ...overrides });
  const { log, lines } = memoryLogger();
  let db: Database;
  try {
    db = await openWorkspace(config, log);
  } catch (err) {
    rmSync(dir, { recursive: true, force: true });
    throw err;
  }
  let closed = false;
  const closeDb = () => {
    if (!closed) db.close();
    closed = true;
  };
  return {
    dir,
    config,
    db,
    log,
    logLines: lines,
    closeDb,
    cleanup: () => {
      closeDb();
      rmSync(dir, { recursive: true, force: true });
    },
  };
}

/** A workspace on the product's defaults (no limits, all default windows) plus `config`: what the view tests read. */
export const defaultsWorkspace = (config: Partial<ConfigInput> = {}) => tempWorkspace(config, {});

export interface WorkerDir extends ConfigFolder {
  cleanup: () => void;
}

/**
 * A folder with a config for a worker, NOT opened: the worker (in this process or a
 * child) must be the one that opens the database. Short write-finish times keep tests quick.
 */
export function workerDir(overrides: Partial<ConfigInput> = {}): WorkerDir {
  const folder = configFolder('riskfold-worker-', { ...MINIMAL_CONFIG, watch: { stableMs: 200, pollMs: 50 }, ...overrides });
  mkdirSync(folder.config.inbox, { recursive: true });
  return { ...folder, cleanup: () => rmSync(folder.dir, { recursive: true, force: true }) };
}
