import { existsSync, linkSync, mkdirSync, readdirSync, readFileSync, rmSync, statSync, symlinkSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { ingestFile } from '../../src/ingest/ingestFile.ts';
import { openDatabase } from '../../src/storage/database.ts';
import { runCli, startCli } from '../cli/cliProcess.ts';
import { pricesCsv } from '../helpers/files.ts';
import { waitFor } from '../helpers/wait.ts';
import { workerSlot } from '../helpers/workerFixture.ts';
import { tempWorkspace, workerDir, type TempWorkspace } from '../helpers/workspace.ts';

// stands for a system file outside the inbox; its first line must end up nowhere
const SECRET = 'operator:SECRET-FIRST-LINE:0:0\nsecond line\n';

describe('a delivery that is not a file of its own', () => {
  const slot = workerSlot();
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  /** A worker folder whose inbox holds a hard link to a "system" file outside it that holds SECRET. */
  function inboxLinkedToSecret() {
    const wd = (slot.wd = workerDir());
    const system = path.join(wd.dir, 'etc', 'accounts');
    mkdirSync(path.dirname(system));
    writeFileSync(system, SECRET);
    const link = path.join(wd.config.inbox, 'prices_20200102.csv');
    linkSync(system, link);
    return { wd, system, link };
  }

  /** `status --details` of the running worker (from its read copy): the file problems, summed and listed. */
  function fileProblems(configPath: string) {
    const run = runCli(['status', '--details', '--format', 'json', '--config', configPath]);
    expect(run.status, run.stderr).toBe(0);
    expect(run.stdout).not.toContain('SECRET');
    const json = JSON.parse(run.stdout) as Record<string, { columns: string[]; rows: Record<string, string>[]; total: number }>;
    return { summary: json.fileProblems.rows.map((r) => [r.problem, r.files]), rows: json.fileProblemRows.rows.map((r) => [r.name, r.problem, r.reason]) };
  }

  it('a hard link to a file outside the inbox is left unread where it is, named in one line, and the other files still load', async () => {
    const { wd, system } = inboxLinkedToSecret();
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
      // a hold without a digest: nothing of the file was read
      expect(await db.all('select name, sha256, code from held_files where released_at is null')).toEqual([{ name: 'prices_20200102.csv', sha256: '', code: 'hard_link' }]);
    } finally {
      db.close();
    }
    expect(readdirSync(wd.config.inbox)).toEqual(['prices_20200102.csv']);
    expect(readdirSync(wd.config.quarantine)).toEqual([]);
    expect(readFileSync(system, 'utf8')).toBe(SECRET);
    expect(statSync(system).nlink).toBe(2);
  });

  it('riskfold watch shows a refused hard link in status until the link leaves the inbox', async () => {
    const { wd, system, link } = inboxLinkedToSecret();
    const worker = (slot.worker = startCli(['watch', '--config', wd.configPath]));
    await waitFor(() => worker.logLines().some((l) => l.msg === 'batch done'), 30_000, 'the catch-up batch');
    await waitFor(() => existsSync(wd.config.readCopy), 10_000, 'the read copy');
    expect(fileProblems(wd.configPath)).toEqual({
      summary: [['not read: hard_link', 1]],
      rows: [['prices_20200102.csv', 'not read: hard_link', 'a hard link (2 names for one file, the others outside the inbox): not read; deliver a copy of its own']],
    });

    rmSync(link);
    await waitFor(() => worker.logLines().some((l) => l.msg === 'holds ended: the files left the inbox'), 10_000, 'the hold to end');
    await waitFor(() => fileProblems(wd.configPath).rows.length === 0, 30_000, 'status without the link');
    expect(fileProblems(wd.configPath).summary).toEqual([]);
    expect(JSON.stringify(worker.logLines())).not.toContain('SECRET');
    worker.child.kill('SIGTERM');
    expect(await worker.exited).toEqual({ code: 0, signal: null });
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
