import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, readdirSync, utimesSync } from 'node:fs';
import path from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { openDatabase } from '../../src/storage/database.ts';
import { writeCsv } from '../helpers/files.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';

const BIN = path.resolve(import.meta.dirname, '../../bin/riskfold.js');

function riskfold(ws: TempWorkspace, ...args: string[]) {
  const run = spawnSync(process.execPath, [BIN, ...args, '--config', ws.config.configPath], {
    cwd: ws.dir,
    encoding: 'utf8',
    env: { ...process.env, RISKFOLD_LOG_LEVEL: 'silent' },
  });
  return { code: run.status, stdout: run.stdout, stderr: run.stderr };
}

let ws: TempWorkspace | undefined;
afterEach(() => ws?.cleanup());

describe('riskfold ingest', () => {
  it('loads every delivery in the inbox, prices before positions and oldest first within a kind, prints one line per file and exits 0 despite a rejection', async () => {
    ws = await tempWorkspace();
    const inbox = ws.config.inbox;
    // modification time decides the order, as the files were delivered
    const at = (file: string, seconds: number) => utimesSync(file, 0, new Date(Date.UTC(2026, 3, 10, 18, 0, seconds)));
    at(writeCsv(inbox, 'positions_0410.csv', [['date', 'portfolio_id', 'security_id', 'quantity'], ['2026-04-09', 'acct-growth', 'EQ-NORDWIND', '100'], ['2026-04-09', 'acct-growth', 'CASH:EUR', '500']]), 2);
    at(writeCsv(inbox, 'prices_0410.csv', [['date', 'security_id', 'price'], ['2026-04-09', 'EQ-NORDWIND', '10'], ['2026-04-10', 'EQ-NORDWIND', '10.5']]), 1);
    at(writeCsv(inbox, 'prices_bad.csv', [['date', 'security_id', 'price'], ['2026-04-10', 'EQ-NORDWIND', '-3.0']]), 3);
    writeCsv(inbox, 'prices_late.csv.part', [['date'], ['x']]);
    writeCsv(inbox, '.prices_hidden.csv', [['date'], ['x']]);
    mkdirSync(path.join(inbox, 'prices_folder.csv'));
    ws.closeDb();

    const run = riskfold(ws, 'ingest');
    expect(run.stderr).toBe('');
    expect(run.code).toBe(0);
    const lines = run.stdout.trim().split('\n');
    expect(lines[0]).toMatch(/^ingested {3}prices_0410\.csv: 2 rows of prices -> archive\/\d{4}-\d\d-\d\d\/prices_0410\.csv$/);
    expect(lines[1]).toBe('rejected   prices_bad.csv line 2, column price: "-3.0" is not a positive number -> quarantine/prices_bad.csv');
    expect(lines[2]).toMatch(/^ingested {3}positions_0410\.csv: 2 rows of positions -> /);
    expect(lines[3]).toBe('1 file rejected: see the reason files in quarantine');
    expect(readdirSync(inbox).sort()).toEqual(['.prices_hidden.csv', 'prices_folder.csv', 'prices_late.csv.part']);

    const db = await openDatabase(ws.config.database, { readOnly: true });
    try {
      expect(await db.all('select name, status from ingested_files order by file_id')).toEqual([
        { name: 'prices_0410.csv', status: 'ingested' },
        { name: 'prices_bad.csv', status: 'rejected' },
        { name: 'positions_0410.csv', status: 'ingested' },
      ]);
    } finally {
      db.close();
    }
  });

  it('fails with one line while another process holds the database', async () => {
    ws = await tempWorkspace();
    const run = riskfold(ws, 'ingest');
    expect(run.code).not.toBe(0);
    expect(run.stderr.trim().split('\n')).toHaveLength(1);
    expect(run.stderr).toContain('is held by another process');
  });

  it('fails on a named file that does not exist, before touching anything', async () => {
    ws = await tempWorkspace();
    const file = writeCsv(ws.config.inbox, 'prices_0410.csv', [['date', 'security_id', 'price'], ['2026-04-09', 'EQ-NORDWIND', '10']]);
    ws.closeDb();
    const run = riskfold(ws, 'ingest', file, path.join(ws.dir, 'prices_missing.csv'));
    expect(run.code).toBe(1);
    expect(run.stderr).toMatch(/prices_missing\.csv: no such file/);
    expect(existsSync(file)).toBe(true);
  });
});
