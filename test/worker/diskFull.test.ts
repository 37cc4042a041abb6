import { existsSync, readdirSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { openDatabase } from '../../src/storage/database.ts';
import { startCli, type RunningCli } from '../cli/cliProcess.ts';
import { pricesCsv } from '../helpers/files.ts';
import { waitFor } from '../helpers/wait.ts';
import { workerDir, type WorkerDir } from '../helpers/workspace.ts';

// The disk is never filled: RISKFOLD_FAULT_DISK_ROOM names a file holding the bytes the
// disk has besides the database, which the worker's free-space check reads instead.
describe('riskfold watch on a disk too full for the read copy', () => {
  let wd: WorkerDir | undefined;
  let worker: RunningCli | undefined;
  afterEach(async () => {
    if (worker && worker.child.exitCode === null && worker.child.signalCode === null) worker.child.kill('SIGKILL');
    await worker?.exited;
    worker = undefined;
    wd?.cleanup();
  });

  const batchesDone = (c: RunningCli) => c.logLines().filter((l) => l.msg === 'batch done').length;

  async function copiedFiles(): Promise<{ files: number; rows: number }> {
    const copy = await openDatabase(wd!.config.readCopy, { readOnly: true });
    try {
      const [r] = await copy.all<{ files: number; rows: number }>(
        "select (select count(*)::integer from ingested_files where status = 'ingested') as files, (select count(*)::integer from prices) as rows",
      );
      return r;
    } finally {
      copy.close();
    }
  }

  it('keeps loading and committing, says so in one line, and publishes with the next batch once there is room again', async () => {
    wd = workerDir({ watch: { stableMs: 200, pollMs: 50, publishRetryMs: 3_600_000 } });
    const room = path.join(wd.dir, 'disk-room');
    writeFileSync(room, '1000');
    writeFileSync(path.join(wd.config.inbox, 'prices_a.csv'), pricesCsv(30, 2, '2020-01-01'));
    worker = startCli(['watch', '--config', wd.configPath], { RISKFOLD_FAULT_DISK_ROOM: room });
    await waitFor(() => batchesDone(worker!) >= 1, 30_000, 'the catch-up batch');

    const full = worker.logLines().filter((l) => l.kind === 'disk_full');
    expect(full).toHaveLength(1);
    expect(full[0].level).toBe(40); // pino's warn
    expect(full[0].msg).toMatch(/^read copy not published: 0 MiB free in .+, a copy of the database needs \d+ MiB; everything is committed, the copy follows once there is room$/);
    expect(String(full[0].msg)).not.toContain('\n');
    expect(JSON.stringify(worker.logLines())).not.toContain('Command failed');
    expect(worker.child.exitCode).toBeNull();
    expect(existsSync(wd.config.readCopy)).toBe(false);
    expect(readdirSync(path.dirname(wd.config.readCopy)).filter((f) => f.includes('.tmp-'))).toEqual([]);
    expect(readdirSync(wd.config.inbox)).toEqual([]);

    // space returns: the next batch publishes a copy holding both files
    writeFileSync(room, String(10 * 1024 ** 3));
    writeFileSync(path.join(wd.config.inbox, 'prices_b.csv'), pricesCsv(30, 2, '2020-03-01'));
    await waitFor(() => batchesDone(worker!) >= 2, 30_000, 'the batch after space returned');
    expect(worker.logLines().filter((l) => l.kind === 'disk_full')).toHaveLength(1);
    expect(await copiedFiles()).toEqual({ files: 2, rows: 120 });
    worker.child.kill('SIGTERM');
    expect(await worker.exited).toEqual({ code: 0, signal: null });
  });

  it('publishes by itself after watch.publishRetryMs once there is room, with no new file', async () => {
    wd = workerDir({ watch: { stableMs: 200, pollMs: 50, publishRetryMs: 300 } });
    const room = path.join(wd.dir, 'disk-room');
    writeFileSync(room, '1000');
    writeFileSync(path.join(wd.config.inbox, 'prices_a.csv'), pricesCsv(30, 2, '2020-01-01'));
    worker = startCli(['watch', '--config', wd.configPath], { RISKFOLD_FAULT_DISK_ROOM: room });
    await waitFor(() => batchesDone(worker!) >= 1, 30_000, 'the catch-up batch');
    expect(existsSync(wd.config.readCopy)).toBe(false);
    writeFileSync(room, String(10 * 1024 ** 3));
    await waitFor(() => existsSync(wd!.config.readCopy), 20_000, 'the retried publish');
    expect(batchesDone(worker)).toBe(1);
    expect(await copiedFiles()).toEqual({ files: 1, rows: 60 });
    worker.child.kill('SIGTERM');
    expect(await worker.exited).toEqual({ code: 0, signal: null });
  });
});
