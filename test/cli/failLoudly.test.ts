import { writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { pricesCsv, writeCsv } from '../helpers/files.ts';
import { workerDir, type WorkerDir } from '../helpers/workspace.ts';
import { runCli } from './cliProcess.ts';

// Commands given nonsense exit non-zero with one line instead of doing nothing quietly.
describe('riskfold commands fail loudly on nonsense', () => {
  let desk: WorkerDir;
  const cli = (...args: string[]) => runCli([...args, '--config', desk.configPath]);

  beforeAll(() => {
    desk = workerDir();
    writeFileSync(path.join(desk.config.inbox, 'prices_2020.csv'), pricesCsv(10, 2));
    writeCsv(desk.config.inbox, 'positions_2020.csv', [['date', 'portfolio_id', 'security_id', 'quantity'], ['2020-01-01', 'acct-growth', 'EQ-NORDWIND', 10]]);
    writeCsv(desk.config.inbox, 'prices_bad.csv', [['date', 'security_id', 'price'], ['2020-01-02', 'EQ-NORDWIND', '-1']]);
    // its last line has no line break: still being written, so held in the inbox
    writeFileSync(path.join(desk.config.inbox, 'prices_partial.csv'), 'date,security_id,price\n2020-01-03,EQ-NORDWIND,10');
  });
  afterAll(() => desk.cleanup());

  it('ingest --strict loads every good file, then exits non-zero because one was rejected and one is held', () => {
    const r = cli('ingest', '--strict');
    expect(r.stdout).toMatch(/^ingested\s+prices_2020\.csv/m);
    expect(r.stdout).toMatch(/^rejected\s+prices_bad\.csv/m);
    expect(r.stdout).toMatch(/^held\s+prices_partial\.csv/m);
    expect(r.status).toBe(1);
    expect(r.stderr.trim().split('\n').at(-1)).toBe('riskfold: --strict: 1 of 4 files rejected; 1 of 4 files held in the inbox, not loaded');
  });

  it('recompute refuses an unknown portfolio and a --from after the history, with one line each', () => {
    const unknown = cli('recompute', '--portfolio', 'acct-nosuch');
    expect(unknown.status).not.toBe(0);
    expect(unknown.stderr.trim().split('\n').at(-1)).toBe('riskfold: no portfolio "acct-nosuch" in the positions received (known: acct-growth)');
    const late = cli('recompute', '--from', '2030-01-01');
    expect(late.status).not.toBe(0);
    expect(late.stderr.trim().split('\n').at(-1)).toBe('riskfold: --from 2030-01-01 is after the latest valuation date, 2020-01-10: nothing to recompute');
    expect(cli('recompute', '--from', '2020-01-05', '--portfolio', 'acct-growth').status).toBe(0);
  });
});
