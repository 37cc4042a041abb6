import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { resolveConfig, type Config } from '../../src/config/load.ts';
import type { ConfigInput } from '../../src/config/schema.ts';
import { MINIMAL_CONFIG } from '../helpers/workspace.ts';

export interface WorkerDir {
  dir: string;
  configPath: string;
  config: Config;
  cleanup: () => void;
}

/**
 * A folder with a config for a worker, NOT opened: the worker (in this process or a
 * child) must be the one that opens the database. Short write-finish times keep tests quick.
 */
export function workerDir(overrides: Partial<ConfigInput> = {}): WorkerDir {
  const dir = mkdtempSync(path.join(tmpdir(), 'riskfold-worker-'));
  const raw = { ...MINIMAL_CONFIG, watch: { stableMs: 200, pollMs: 50 }, ...overrides };
  const configPath = path.join(dir, 'pipeline.config.json');
  writeFileSync(configPath, `${JSON.stringify(raw, null, 2)}\n`);
  const config = resolveConfig(raw, configPath);
  mkdirSync(config.inbox, { recursive: true });
  return { dir, configPath, config, cleanup: () => rmSync(dir, { recursive: true, force: true }) };
}

const SECURITIES = ['EQ-NORDWIND', 'EQ-SALTMARSH', 'BD-KESTREL-28', 'EQ-OAKHOLLOW'];

/**
 * Invented daily prices: `days` business-like dates from 2020-01-01 for `securities`
 * securities (names cycle with a suffix past the four above). Written straight to
 * `file` as one string: big enough files make an ingest take a while.
 */
export function pricesCsv(days: number, securities = 4, start = '2020-01-01'): string {
  const lines = ['date,security_id,price'];
  const t0 = Date.parse(`${start}T00:00:00Z`);
  for (let d = 0; d < days; d++) {
    const date = new Date(t0 + d * 86_400_000).toISOString().slice(0, 10);
    for (let s = 0; s < securities; s++) {
      const id = s < SECURITIES.length ? SECURITIES[s] : `${SECURITIES[s % SECURITIES.length]}-${Math.floor(s / SECURITIES.length)}`;
      lines.push(`${date},${id},${(100 + s + Math.sin(d / 7 + s)).toFixed(4)}`);
    }
  }
  return `${lines.join('\n')}\n`;
}
