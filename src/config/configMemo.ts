import { createHash } from 'node:crypto';
import { mkdirSync, readFileSync, renameSync, writeFileSync } from 'node:fs';
import { homedir } from 'node:os';
import path from 'node:path';
import { isDeepStrictEqual } from 'node:util';
import { deepFreeze } from './deepFreeze.ts';
import type { Config } from './load.ts';

/**
 * A read command's config without loading zod and the schema (a third of `sql`'s
 * start-up): the config the last full parse made of the same file text, by the same
 * build, remembered in the user's cache folder. The zod schema stays the only judge; the
 * memo only repeats its verdict on these exact bytes. A miss (first read, an edited
 * config, a new build, or no build stamp: running the sources) parses in full and
 * remembers the result. A memo that cannot be read or written is a miss.
 */
export async function memoizedConfig(configPath: string, build: string | null = builtStamp(), cacheDir = userCacheDir()): Promise<Config> {
  let text: string;
  try {
    text = readFileSync(configPath, 'utf8');
  } catch {
    return (await import('./load.ts')).loadConfig(configPath); // its error says what is wrong with the file
  }
  const absolute = path.resolve(configPath);
  const file = path.join(cacheDir, `config-${digest(absolute)}.json`);
  const key = build === null ? null : digest(`${build}\0${absolute}\0${text}`);
  if (key !== null) {
    const remembered = readMemo(file, key);
    if (remembered) return deepFreeze(remembered);
  }
  const config = (await import('./load.ts')).configFromText(text, configPath);
  if (key !== null) writeMemo(file, key, config);
  return config;
}

interface Memo {
  key: string;
  config: Config;
}

function readMemo(file: string, key: string): Config | null {
  try {
    const memo = JSON.parse(readFileSync(file, 'utf8')) as Memo;
    return memo.key === key ? memo.config : null;
  } catch {
    return null;
  }
}

/** Only a config that JSON gives back exactly is remembered; written whole (a rename), or not at all. */
function writeMemo(file: string, key: string, config: Config): void {
  const text = JSON.stringify({ key, config } satisfies Memo);
  if (!isDeepStrictEqual((JSON.parse(text) as Memo).config, config)) return;
  try {
    mkdirSync(path.dirname(file), { recursive: true, mode: 0o700 });
    const partial = `${file}.${process.pid}.tmp`;
    writeFileSync(partial, text, { mode: 0o600 });
    renameSync(partial, file);
  } catch {
    // a read-only or full cache folder only costs the next start its speed
  }
}

function digest(text: string): string {
  return createHash('sha256').update(text).digest('hex');
}

/** The build's stamp (`npm run build` writes it, dated): null when running the sources, which have none. */
function builtStamp(): string | null {
  try {
    return readFileSync(new URL('../built', import.meta.url), 'utf8');
  } catch {
    return null;
  }
}

/** The user's own cache folder (XDG), never a shared one: another user must not be able to hand us a config. */
function userCacheDir(): string {
  return path.join(process.env.XDG_CACHE_HOME || path.join(homedir(), '.cache'), 'riskfold');
}
