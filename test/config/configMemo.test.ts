import { mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { memoizedConfig } from '../../src/config/configMemo.ts';
import { loadConfig } from '../../src/config/load.ts';
import { MINIMAL_CONFIG } from '../helpers/workspace.ts';

// the memo must give exactly what the full parse gives; these checks are of the project's own contract (no outside source)
const dirs: string[] = [];
function folder(): { configPath: string; cacheDir: string } {
  const dir = mkdtempSync(path.join(tmpdir(), 'rf-memo-'));
  dirs.push(dir);
  const configPath = path.join(dir, 'pipeline.config.json');
  writeFileSync(configPath, JSON.stringify(MINIMAL_CONFIG));
  return { configPath, cacheDir: path.join(dir, 'cache') };
}
afterEach(() => {
  for (const d of dirs.splice(0)) rmSync(d, { recursive: true, force: true });
});

/** Rewrites the remembered config's database, keeping the memo's key: only a read of the memo returns it. */
function tamper(cacheDir: string, database: string): void {
  const [file] = readdirSync(cacheDir).map((f) => path.join(cacheDir, f));
  const memo = JSON.parse(readFileSync(file, 'utf8'));
  writeFileSync(file, JSON.stringify({ ...memo, config: { ...memo.config, database } }));
}

describe('memoizedConfig', () => {
  it('gives what loadConfig gives, frozen, from the first parse and from the memo', async () => {
    const { configPath, cacheDir } = folder();
    const first = await memoizedConfig(configPath, 'build-1', cacheDir);
    expect(first).toStrictEqual(loadConfig(configPath));
    expect(readdirSync(cacheDir)).toHaveLength(1);
    const second = await memoizedConfig(configPath, 'build-1', cacheDir);
    expect(second).toStrictEqual(first);
    expect(Object.isFrozen(second.risk)).toBe(true);
  });

  it('reads the memo for the same text and build, and parses again when either changes', async () => {
    const { configPath, cacheDir } = folder();
    await memoizedConfig(configPath, 'build-1', cacheDir);
    tamper(cacheDir, '/memo/was/read.duckdb');
    expect((await memoizedConfig(configPath, 'build-1', cacheDir)).database).toBe('/memo/was/read.duckdb');
    expect((await memoizedConfig(configPath, 'build-2', cacheDir)).database).toBe(path.join(path.dirname(configPath), 'riskfold.duckdb'));

    tamper(cacheDir, '/memo/was/read.duckdb');
    writeFileSync(configPath, JSON.stringify({ ...MINIMAL_CONFIG, database: 'other.duckdb' }));
    expect((await memoizedConfig(configPath, 'build-2', cacheDir)).database).toBe(path.join(path.dirname(configPath), 'other.duckdb'));
  });

  it('remembers nothing without a build stamp (running the sources)', async () => {
    const { configPath, cacheDir } = folder();
    expect(await memoizedConfig(configPath, null, cacheDir)).toStrictEqual(loadConfig(configPath));
    expect(() => readdirSync(cacheDir)).toThrow();
  });

  it('reports an invalid or missing config as loadConfig does, and remembers nothing', async () => {
    const { configPath, cacheDir } = folder();
    writeFileSync(configPath, JSON.stringify({ ...MINIMAL_CONFIG, risk: { windows: 'many' } }));
    await expect(memoizedConfig(configPath, 'build-1', cacheDir)).rejects.toMatchObject({ kind: 'config_invalid' });
    expect(() => readdirSync(cacheDir)).toThrow();
    await expect(memoizedConfig(path.join(cacheDir, 'none.json'), 'build-1', cacheDir)).rejects.toMatchObject({ kind: 'config_missing' });
  });
});
