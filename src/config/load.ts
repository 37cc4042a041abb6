import { readFileSync } from 'node:fs';
import path from 'node:path';
import { z } from 'zod';
import { configSchema, limitLevels, type LimitConfig, type ParsedConfig } from './schema.ts';
import { RiskfoldError } from '../errors.ts';

export type ResolvedLimit = Required<LimitConfig>;

/** The config the stages receive: paths absolute, limit levels filled in, frozen. */
export type Config = Readonly<
  Omit<ParsedConfig, 'limits' | 'readCopy' | '$schema'> & {
    configPath: string;
    readCopy: string;
    limits: readonly ResolvedLimit[];
  }
>;

export const DEFAULT_CONFIG_FILE = 'pipeline.config.json';

/** Parses an already-read JSON value; `configPath` anchors the relative paths. */
export function resolveConfig(raw: unknown, configPath: string): Config {
  const parsed = configSchema.safeParse(raw);
  if (!parsed.success) {
    throw new RiskfoldError('config_invalid', `${configPath}: invalid config\n${z.prettifyError(parsed.error)}`, {
      file: configPath,
    });
  }
  const cfg = parsed.data;
  const dir = path.dirname(path.resolve(configPath));
  const at = (p: string) => path.resolve(dir, p);
  const database = at(cfg.database);
  const alerts = { ...cfg.alerts, file: cfg.alerts.file === undefined ? undefined : at(cfg.alerts.file) };
  const { $schema: _ignored, ...rest } = cfg;
  return deepFreeze({
    ...rest,
    configPath: path.resolve(configPath),
    inbox: at(cfg.inbox),
    archive: at(cfg.archive),
    quarantine: at(cfg.quarantine),
    database,
    readCopy: cfg.readCopy === undefined ? database.replace(/(\.duckdb)?$/, '.read.duckdb') : at(cfg.readCopy),
    alerts,
    limits: cfg.limits.map((l) => ({ ...l, ...limitLevels(l) })),
  });
}

export function loadConfig(configPath: string = DEFAULT_CONFIG_FILE): Config {
  let text: string;
  try {
    text = readFileSync(configPath, 'utf8');
  } catch (cause) {
    throw new RiskfoldError('config_missing', `${configPath}: cannot read the config file (${(cause as Error).message})`, {
      file: configPath,
    });
  }
  let raw: unknown;
  try {
    raw = JSON.parse(text);
  } catch (cause) {
    throw new RiskfoldError('config_invalid', `${configPath}: not valid JSON (${(cause as Error).message})`, {
      file: configPath,
    });
  }
  return resolveConfig(raw, configPath);
}

function deepFreeze<T>(value: T): T {
  if (value && typeof value === 'object') {
    for (const v of Object.values(value)) deepFreeze(v);
    Object.freeze(value);
  }
  return value;
}
