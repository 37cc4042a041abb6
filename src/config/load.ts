import { readFileSync } from 'node:fs';
import path from 'node:path';
import { z } from 'zod';
import { configSchema, DEFAULT_SOURCES, sourceSchema, type ParsedConfig, type SourceConfig } from './schema.ts';
import { resolveLimits, type ResolvedLimit } from './limitSeries.ts';
import { RiskfoldError } from '../errors.ts';
import { jsonErrorOffset, knownKeysAt, lineAndColumn, nearestKey } from './explain.ts';
import { deepFreeze } from './deepFreeze.ts';
import { DEFAULT_CONFIG_FILE, HOW_TO_MAKE_ONE } from './findConfig.ts';

export { DEFAULT_CONFIG_FILE, findConfigFile } from './findConfig.ts';

export type { ResolvedLimit };

/** The config the stages receive: paths absolute, limit levels filled in, frozen. */
export type Config = Readonly<
  Omit<ParsedConfig, 'limits' | 'readCopy' | '$schema' | 'replaceDefaultSources'> & {
    configPath: string;
    readCopy: string;
    limits: readonly ResolvedLimit[];
  }
>;

const defaultSources: readonly SourceConfig[] = DEFAULT_SOURCES.map((s) => sourceSchema.parse(s));

/** Parses an already-read JSON value; `configPath` anchors the relative paths. */
export function resolveConfig(raw: unknown, configPath: string): Config {
  const parsed = configSchema.safeParse(raw);
  if (!parsed.success) {
    throw new RiskfoldError('config_invalid', `${configPath}: invalid config\n${z.prettifyError(withKeySuggestions(parsed.error))}`, {
      file: configPath,
    });
  }
  const cfg = parsed.data;
  const dir = path.dirname(path.resolve(configPath));
  const at = (p: string) => path.resolve(dir, p);
  const database = at(cfg.database);
  const alerts = { ...cfg.alerts, file: cfg.alerts.file === undefined ? undefined : at(cfg.alerts.file) };
  const { $schema: _ignored, replaceDefaultSources, ...rest } = cfg;
  return deepFreeze({
    ...rest,
    // the config's own sources come first, so they win over a default with an overlapping pattern
    sources: replaceDefaultSources ? cfg.sources : [...cfg.sources, ...defaultSources.map((s) => ({ ...s }))],
    configPath: path.resolve(configPath),
    inbox: at(cfg.inbox),
    archive: at(cfg.archive),
    quarantine: at(cfg.quarantine),
    database,
    readCopy: cfg.readCopy === undefined ? database.replace(/(\.duckdb)?$/, '.read.duckdb') : at(cfg.readCopy),
    alerts,
    limits: resolveLimits(cfg.limits, cfg.risk.historical.days),
  });
}

export function loadConfig(configPath: string = DEFAULT_CONFIG_FILE): Config {
  return configFromText(readConfigText(configPath), configPath);
}

/** The config file's text; a file that cannot be read is the user's to fix. */
export function readConfigText(configPath: string): string {
  try {
    return readFileSync(configPath, 'utf8');
  } catch (cause) {
    const reason = (cause as NodeJS.ErrnoException).code === 'ENOENT' ? `no such file; ${HOW_TO_MAKE_ONE}` : (cause as Error).message;
    throw new RiskfoldError('config_missing', `${configPath}: cannot read the config file (${reason})`, {
      file: configPath,
    });
  }
}

/** The config a file's text holds (as `loadConfig`, once the file is read). */
export function configFromText(text: string, configPath: string): Config {
  let raw: unknown;
  try {
    raw = JSON.parse(text);
  } catch (cause) {
    const message = (cause as Error).message.split('\n')[0];
    const { line, column } = lineAndColumn(text, jsonErrorOffset(text, message));
    throw new RiskfoldError('config_invalid', `${configPath}:${line}:${column}: not valid JSON (${message.replace(/ in JSON at position \d+/, '')})`, {
      file: configPath,
    });
  }
  return resolveConfig(raw, configPath);
}

/**
 * Adds "did you mean ...?" to each unknown key that is a near miss of a known one, and
 * says "is missing" for a required key left out (zod's "expected number, received
 * undefined" reads as if a value were there).
 */
function withKeySuggestions(error: z.ZodError): z.ZodError {
  return new z.ZodError(
    error.issues.map((issue) => {
      if (issue.code === 'invalid_type' && /received undefined$/.test(issue.message)) {
        return { ...issue, message: `is missing (a ${issue.expected} is required)` };
      }
      if (issue.code !== 'unrecognized_keys') return issue;
      const known = (knownKeysAt(configSchema, issue.path) ?? []).filter((k) => k !== '$schema');
      const message = issue.keys
        .map((key) => {
          const near = nearestKey(key, known);
          return near === undefined ? `unknown key "${key}"` : `unknown key "${key}"; did you mean "${near}"?`;
        })
        .join('; ');
      return { ...issue, message };
    }),
  );
}
