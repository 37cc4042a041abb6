import { spawnSync } from 'node:child_process';
import { mkdirSync, mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { writeCsv } from '../helpers/files.ts';

const ROOT = path.resolve(import.meta.dirname, '../..');

// `npm install -g .` into a private prefix (offline: a folder install links it, fetching
// nothing), then the installed `riskfold` run from folders outside the repository.
describe('riskfold installed with npm install -g', () => {
  let dir: string;
  let bin: string;
  const run = (cwd: string, args: string[], env: NodeJS.ProcessEnv = {}) => {
    const r = spawnSync(bin, args, { cwd, encoding: 'utf8', env: { ...process.env, RISKFOLD_CONFIG: '', ...env }, timeout: 60_000, killSignal: 'SIGKILL' });
    return { status: r.status, stdout: r.stdout, stderr: r.stderr };
  };

  beforeAll(() => {
    dir = mkdtempSync(path.join(tmpdir(), 'riskfold-global-'));
    const npm = spawnSync('npm', ['install', '-g', '.', '--prefix', path.join(dir, 'prefix'), '--offline', '--no-audit', '--no-fund'], { cwd: ROOT, encoding: 'utf8' });
    expect(npm.status, npm.stderr).toBe(0);
    bin = path.join(dir, 'prefix', 'bin', 'riskfold');
  });
  afterAll(() => rmSync(dir, { recursive: true, force: true }));

  it('without a config anywhere, says how to make one', () => {
    const empty = path.join(dir, 'empty');
    mkdirSync(empty);
    const r = run(empty, ['status']);
    expect(r.status).toBe(1);
    expect(r.stderr).toBe(
      `riskfold: no pipeline.config.json in ${empty}, no --config and no RISKFOLD_CONFIG: create one with "riskfold init [DIR]", or name yours with --config PATH\n`,
    );
    const named = run(empty, ['status', '--config', 'nowhere.json']);
    expect(named.stderr).toBe('riskfold: nowhere.json: cannot read the config file (no such file; create one with "riskfold init [DIR]")\n');
  });

  it('finds the config by --config, then RISKFOLD_CONFIG, then ./pipeline.config.json', () => {
    expect(run(dir, ['init', 'desk']).status).toBe(0);
    const desk = path.join(dir, 'desk');
    writeCsv(path.join(desk, 'inbox'), 'prices_0401.csv', [['date', 'security_id', 'price'], ['2026-04-01', 'EQ-NORDWIND', '101.5']]);
    // ./pipeline.config.json of the folder the command runs in
    expect(run(desk, ['ingest']).stdout).toMatch(/^ingested\s+prices_0401\.csv: 1 row of prices/m);
    // RISKFOLD_CONFIG from any folder
    const viaEnv = run(dir, ['sql', 'select count(*) as n from prices', '--format', 'csv'], { RISKFOLD_CONFIG: path.join(desk, 'pipeline.config.json') });
    expect(viaEnv.stdout).toBe('n\n1\n');
    // --config wins over RISKFOLD_CONFIG
    const viaFlag = run(dir, ['sql', 'select 1 as one', '--config', path.join(desk, 'pipeline.config.json')], { RISKFOLD_CONFIG: path.join(dir, 'missing.json') });
    expect(viaFlag.status).toBe(0);
  });
});
