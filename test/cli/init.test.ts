import { execFileSync, spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { starterConfig } from '../../src/cli/actions/init.ts';
import { loadConfig } from '../../src/config/load.ts';

const ROOT = path.resolve(import.meta.dirname, '../..');
const CLI = path.join(ROOT, 'bin/riskfold.js');

describe('riskfold init', () => {
  let dir: string | undefined;
  afterEach(() => {
    if (dir) rmSync(dir, { recursive: true, force: true });
  });

  it('writes a config that loads, its schema beside it, and the three folders', () => {
    dir = mkdtempSync(path.join(tmpdir(), 'riskfold-init-'));
    const target = path.join(dir, 'desk');
    const out = execFileSync(process.execPath, [CLI, 'init', target], { encoding: 'utf8' });
    expect(out).toContain(path.join(target, 'pipeline.config.json'));
    const config = loadConfig(path.join(target, 'pipeline.config.json'));
    expect(config.inbox).toBe(path.join(target, 'inbox'));
    for (const folder of ['inbox', 'archive', 'quarantine']) expect(statSync(path.join(target, folder)).isDirectory()).toBe(true);
    const raw = JSON.parse(readFileSync(path.join(target, 'pipeline.config.json'), 'utf8')) as { $schema: string };
    expect(readFileSync(path.resolve(target, raw.$schema), 'utf8')).toBe(readFileSync(path.join(ROOT, 'pipeline.config.schema.json'), 'utf8'));
  });

  it('refuses to overwrite an existing config, with one line and a non-zero exit', () => {
    dir = mkdtempSync(path.join(tmpdir(), 'riskfold-init-'));
    execFileSync(process.execPath, [CLI, 'init', dir]);
    const before = readFileSync(path.join(dir, 'pipeline.config.json'), 'utf8');
    const again = spawnSync(process.execPath, [CLI, 'init', dir], { encoding: 'utf8' });
    expect(again.status).not.toBe(0);
    expect(again.stderr.trim().split('\n')).toHaveLength(1);
    expect(again.stderr).toMatch(/already exists; init never overwrites/);
    expect(readFileSync(path.join(dir, 'pipeline.config.json'), 'utf8')).toBe(before);
  });

  it('writes to the file --config names', () => {
    dir = mkdtempSync(path.join(tmpdir(), 'riskfold-init-'));
    const file = path.join(dir, 'etc', 'desk.json');
    execFileSync(process.execPath, [CLI, 'init', '--config', file]);
    expect(existsSync(file)).toBe(true);
    expect(existsSync(path.join(dir, 'etc', 'inbox'))).toBe(true);
  });
});

describe('the project pipeline.config.json', () => {
  it('is the starter config with its workspace in the git-ignored var/ folder', () => {
    const file = path.join(ROOT, 'pipeline.config.json');
    expect(JSON.parse(readFileSync(file, 'utf8'))).toEqual(starterConfig('var/'));
    const config = loadConfig(file);
    expect(path.relative(ROOT, config.database)).toBe(path.join('var', 'riskfold.duckdb'));
    expect(readFileSync(path.join(ROOT, '.gitignore'), 'utf8')).toMatch(/^var\/$/m);
  });
});
