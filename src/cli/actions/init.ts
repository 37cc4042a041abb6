import { copyFileSync, existsSync, mkdirSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { DEFAULT_CONFIG_FILE, resolveConfig } from '../../config/load.ts';
import type { ConfigInput } from '../../config/schema.ts';
import { SCHEMA_FILE } from '../../config/writeJsonSchema.ts';
import { RiskfoldError } from '../../errors.ts';

/**
 * The starter config: the SPEC's minimal file with the usual three windows. `prefix`
 * puts every path in a subfolder (the project's own config keeps its workspace in var/).
 */
export function starterConfig(prefix = ''): ConfigInput {
  return {
    $schema: './pipeline.config.schema.json',
    inbox: `${prefix}inbox`,
    archive: `${prefix}archive`,
    quarantine: `${prefix}quarantine`,
    database: `${prefix}riskfold.duckdb`,
    baseCurrency: 'USD',
    risk: { windows: [21, 63, 252], tradingDaysPerYear: 252 },
    limits: [{ portfolio: '*', window: 63, limit: 0.15 }],
    alerts: { file: `${prefix}alerts.jsonl` },
  };
}

/** Writes the config (never over an existing one), the schema beside it, and the folders. */
export function initWorkspace(configPath: string): { configPath: string; folders: string[] } {
  const target = path.resolve(configPath);
  if (existsSync(target)) {
    throw new RiskfoldError('usage', `${target} already exists; init never overwrites a config (edit it, or init another folder)`);
  }
  const raw = starterConfig();
  const config = resolveConfig(raw, target);
  mkdirSync(path.dirname(target), { recursive: true });
  const schemaCopy = path.join(path.dirname(target), path.basename(SCHEMA_FILE));
  if (schemaCopy !== SCHEMA_FILE) copyFileSync(SCHEMA_FILE, schemaCopy);
  writeFileSync(target, `${JSON.stringify(raw, null, 2)}\n`, { flag: 'wx' });
  const folders = [config.inbox, config.archive, config.quarantine];
  for (const dir of folders) mkdirSync(dir, { recursive: true });
  return { configPath: target, folders };
}

/** `riskfold init [DIR]`. */
export function runInit(dir: string, opts: { config?: string }): void {
  // --config given by hand names the file to write; otherwise it goes into DIR
  const { configPath, folders } = initWorkspace(opts.config ?? path.join(dir, DEFAULT_CONFIG_FILE));
  process.stdout.write(
    `wrote ${configPath}\ncreated ${folders.map((f) => path.relative(process.cwd(), f) || '.').join(', ')}\n` +
      `next: drop custodian files into the inbox and run "riskfold watch --config ${path.relative(process.cwd(), configPath)}"\n`,
  );
}
