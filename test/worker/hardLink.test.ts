import { linkSync, mkdirSync, readdirSync, readFileSync, statSync, symlinkSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { ingestFile } from '../../src/ingest/ingestFile.ts';
import { openDatabase } from '../../src/storage/database.ts';
import { runCli } from '../cli/cliProcess.ts';
import { pricesCsv } from '../helpers/files.ts';
import { tempWorkspace, workerDir, type TempWorkspace, type WorkerDir } from '../helpers/workspace.ts';

// stands for a system file outside the inbox; its first line must end up nowhere
const SECRET = 'operator:SECRET-FIRST-LINE:0:0\nsecond line\n';

describe('a delivery that is not a file of its own', () => {
  let wd: WorkerDir | undefined;
  let ws: TempWorkspace | undefined;
  afterEach(() => {
    wd?.cleanup();
    ws?.cleanup();
  });

  it('a hard link to a file outside the inbox is left unread where it is, named in one line, and the other files still load', async () => {
    wd = workerDir();
    const system = path.join(wd.dir, 'etc', 'accounts');
    mkdirSync(path.dirname(system));
    writeFileSync(system, SECRET);
    const link = path.join(wd.config.inbox, 'prices_20200102.csv');
    linkSync(system, link);
    writeFileSync(path.join(wd.config.inbox, 'prices_good.csv'), pricesCsv(30, 2, '2020-01-01'));

    const run = runCli(['ingest', '--config', wd.configPath]);
    expect(run.status, run.stderr).toBe(0);
    const heldLine = run.stdout.split('\n').filter((l) => l.includes('prices_20200102.csv'));
    expect(heldLine).toHaveLength(1);
    expect(heldLine[0]).toMatch(/^held {7}prices_20200102\.csv: a hard link \(2 names for one file, the others outside the inbox\): not read; deliver a copy of its own stays in /);
    expect(`${run.stdout}${run.stderr}`).not.toContain('SECRET');

    const db = await openDatabase(wd.config.database, { readOnly: true });
    try {
      const ledger = await db.all<{ name: string; status: string; error: string | null }>('select name, status, error from ingested_files order by file_id');
      expect(ledger).toEqual([{ name: 'prices_good.csv', status: 'ingested', error: null }]);
      expect(await db.all('select * from held_files')).toEqual([]);
    } finally {
      db.close();
    }
    expect(readdirSync(wd.config.inbox)).toEqual(['prices_20200102.csv']);
    expect(readdirSync(wd.config.quarantine)).toEqual([]);
    expect(readFileSync(system, 'utf8')).toBe(SECRET);
    expect(statSync(system).nlink).toBe(2);
  });

  it('a symlink handed to ingestFile is not followed: left alone, nothing read', async () => {
    ws = await tempWorkspace();
    const system = path.join(ws.dir, 'accounts');
    writeFileSync(system, SECRET);
    const link = path.join(ws.config.inbox, 'prices_20200103.csv');
    symlinkSync(system, link);
    const outcome = await ingestFile(ws.db, ws.config, ws.log, link);
    expect(outcome).toMatchObject({ status: 'held', fileId: null, movedTo: link, hold: { code: 'not_regular_file' } });
    expect(await ws.db.all('select * from ingested_files')).toEqual([]);
    expect(JSON.stringify(ws.logLines())).not.toContain('SECRET');
    expect(ws.logLines().filter((l) => l.code === 'not_regular_file')).toHaveLength(1);
  });
});
