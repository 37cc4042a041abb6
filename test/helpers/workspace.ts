import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
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

/**
 * A fresh folder with a resolved config (written to pipeline.config.json there, so CLI
 * runs can use it) and an opened workspace database. Call `cleanup()` in afterEach.
 */
export async function tempWorkspace(overrides: Partial<ConfigInput> = {}): Promise<TempWorkspace> {
  const dir = mkdtempSync(path.join(tmpdir(), 'riskfold-test-'));
  const raw = { ...MINIMAL_CONFIG, ...overrides };
  const configPath = path.join(dir, 'pipeline.config.json');
  writeFileSync(configPath, `${JSON.stringify(raw, null, 2)}\n`);
  const config = resolveConfig(raw, configPath);
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
