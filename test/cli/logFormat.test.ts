import { spawnSync } from 'node:child_process';
import { writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { pricesCsv, writeCsv } from '../helpers/files.ts';
import { workerDir, type WorkerDir } from '../helpers/workspace.ts';
import { CLI, runCli } from './cliProcess.ts';

const ANSI = /\u001b\[[0-9;]*m/g;

describe('riskfold logs', () => {
  let desk: WorkerDir;
  beforeAll(() => {
    desk = workerDir();
    writeFileSync(path.join(desk.config.inbox, 'prices_2020.csv'), pricesCsv(5, 1));
    writeCsv(desk.config.inbox, 'positions_2020.csv', [['date', 'portfolio_id', 'security_id', 'quantity'], ['2020-01-01', 'acct-growth', 'EQ-NORDWIND', 10]]);
    expect(runCli(['ingest', '--config', desk.configPath]).status).toBe(0);
  });
  afterAll(() => desk.cleanup());

  it('writes JSON lines when stderr is not a terminal', () => {
    const r = runCli(['recompute', '--config', desk.configPath]);
    const lines = r.stderr.trim().split('\n');
    expect(lines.length).toBeGreaterThan(1);
    for (const line of lines) expect(JSON.parse(line)).toMatchObject({ level: expect.any(Number), msg: expect.any(String) });
  });

  // util-linux script(1) runs the command on a pseudo-terminal, as a person at a shell would
  it('writes readable lines on a terminal', () => {
    const r = spawnSync('script', ['-qec', `"${process.execPath}" "${CLI}" recompute --config "${desk.configPath}"`, '/dev/null'], { encoding: 'utf8', timeout: 60_000 });
    const text = r.stdout.replace(ANSI, '').replaceAll('\r', '');
    expect(r.status).toBe(0);
    expect(text).toMatch(/INFO.*: recompute started/);
    expect(text).not.toMatch(/^\{"level"/m);
  });
});
