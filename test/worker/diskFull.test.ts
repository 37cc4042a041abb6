import { spawnSync } from 'node:child_process';
import { copyFileSync, existsSync, mkdirSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { openDatabase } from '../../src/storage/database.ts';
import { startCli, type RunningCli } from '../cli/cliProcess.ts';
import { pricesCsv } from '../helpers/files.ts';
import { waitFor } from '../helpers/wait.ts';
import { workerSlot } from '../helpers/workerFixture.ts';
import { workerDir } from '../helpers/workspace.ts';

const batchesDone = (c: RunningCli) => c.logLines().filter((l) => l.msg === 'batch done').length;

/** What the read copy at `readCopy` holds: ingested files and price rows. */
async function copiedFiles(readCopy: string): Promise<{ files: number; rows: number }> {
  const copy = await openDatabase(readCopy, { readOnly: true });
  try {
    const [r] = await copy.all<{ files: number; rows: number }>(
      "select (select count(*)::integer from ingested_files where status = 'ingested') as files, (select count(*)::integer from prices) as rows",
    );
    return r;
  } finally {
    copy.close();
  }
}

// The disk is never filled: RISKFOLD_FAULT_DISK_ROOM names a file holding the bytes the
// disk has besides the database, which the worker's free-space check reads instead.
describe('riskfold watch on a disk too full for the read copy', () => {
  const slot = workerSlot();

  it('keeps loading and committing, says so in one line, and publishes with the next batch once there is room again', async () => {
    const wd = (slot.wd = workerDir({ watch: { stableMs: 200, pollMs: 50, publishRetryMs: 3_600_000 } }));
    const room = path.join(wd.dir, 'disk-room');
    writeFileSync(room, '1000');
    writeFileSync(path.join(wd.config.inbox, 'prices_a.csv'), pricesCsv(30, 2, '2020-01-01'));
    const worker = (slot.worker = startCli(['watch', '--config', wd.configPath], { RISKFOLD_FAULT_DISK_ROOM: room }));
    await waitFor(() => batchesDone(worker) >= 1, 30_000, 'the catch-up batch');

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
    await waitFor(() => batchesDone(worker) >= 2, 30_000, 'the batch after space returned');
    expect(worker.logLines().filter((l) => l.kind === 'disk_full')).toHaveLength(1);
    expect(await copiedFiles(wd.config.readCopy)).toEqual({ files: 2, rows: 120 });
    worker.child.kill('SIGTERM');
    expect(await worker.exited).toEqual({ code: 0, signal: null });
  });

  it('publishes by itself after watch.publishRetryMs once there is room, with no new file', async () => {
    const wd = (slot.wd = workerDir({ watch: { stableMs: 200, pollMs: 50, publishRetryMs: 300 } }));
    const room = path.join(wd.dir, 'disk-room');
    writeFileSync(room, '1000');
    writeFileSync(path.join(wd.config.inbox, 'prices_a.csv'), pricesCsv(30, 2, '2020-01-01'));
    const worker = (slot.worker = startCli(['watch', '--config', wd.configPath], { RISKFOLD_FAULT_DISK_ROOM: room }));
    await waitFor(() => batchesDone(worker) >= 1, 30_000, 'the catch-up batch');
    expect(existsSync(wd.config.readCopy)).toBe(false);
    writeFileSync(room, String(10 * 1024 ** 3));
    await waitFor(() => existsSync(wd.config.readCopy), 20_000, 'the retried publish');
    expect(batchesDone(worker)).toBe(1);
    expect(await copiedFiles(wd.config.readCopy)).toEqual({ files: 1, rows: 60 });
    worker.child.kill('SIGTERM');
    expect(await worker.exited).toEqual({ code: 0, signal: null });
  });
});

/**
 * A real ENOSPC from the kernel, without root: the worker runs in its own user and mount
 * namespace (unshare(1); plain root needs only the mount one) where the read copy's folder
 * is a tmpfs with room for gigabytes but only as many inodes as it already uses, so the
 * free-space check passes and creating the copy fails with ENOSPC. The test reaches that
 * folder through /proc/<pid>/root to free the inodes again. Kernels that refuse user
 * namespaces to unprivileged users cannot run it; the test above covers the same path
 * with a simulated disk.
 */
const NAMESPACE = process.getuid?.() === 0 ? ['unshare', '--mount'] : ['unshare', '--user', '--map-root-user', '--mount'];
const namespaces = spawnSync(NAMESPACE[0], [...NAMESPACE.slice(1), 'true']).status === 0;

describe('riskfold watch when copying the read copy fails with a real ENOSPC', () => {
  const slot = workerSlot();

  it.skipIf(!namespaces)('keeps ingesting, says so in one line per batch, and publishes once the inodes are free again', async () => {
    const wd = (slot.wd = workerDir({ readCopy: 'copies/riskfold.read.duckdb', watch: { stableMs: 200, pollMs: 50, publishRetryMs: 3_600_000 } }));
    const copies = path.dirname(wd.config.readCopy);
    mkdirSync(copies);
    // three inodes: the root and two fillers; freeing both leaves room for the temporary copy beside the published one
    const fill = 'mount -t tmpfs -o size=4g,nr_inodes=3 riskfold-full "$0" && : > "$0/filler-1" && : > "$0/filler-2" && exec "$@"';
    writeFileSync(path.join(wd.config.inbox, 'prices_a.csv'), pricesCsv(30, 2, '2020-01-01'));
    const worker = (slot.worker = startCli(['watch', '--config', wd.configPath], {}, [...NAMESPACE, 'sh', '-c', fill, copies]));
    const seen = path.join('/proc', String(worker.child.pid), 'root', copies);
    await waitFor(() => batchesDone(worker) >= 1, 60_000, 'the catch-up batch');

    writeFileSync(path.join(wd.config.inbox, 'prices_b.csv'), pricesCsv(30, 2, '2020-03-01'));
    await waitFor(() => batchesDone(worker) >= 2, 60_000, 'the second batch on the full disk');
    const full = worker.logLines().filter((l) => l.kind === 'disk_full');
    expect(full).toHaveLength(2);
    for (const line of full) {
      expect(line.level).toBe(40);
      expect(line.msg).toMatch(/^read copy not published: copying .+ failed: ENOSPC: no space left on device, .+; everything is committed, the copy follows once there is room$/);
      expect(String(line.msg)).not.toContain('\n');
    }
    expect(JSON.stringify(worker.logLines())).not.toContain('Command failed');
    expect(worker.child.exitCode).toBeNull();
    expect(readdirSync(wd.config.inbox)).toEqual([]);
    expect(readdirSync(seen).sort()).toEqual(['filler-1', 'filler-2']);

    rmSync(path.join(seen, 'filler-1'));
    rmSync(path.join(seen, 'filler-2'));
    writeFileSync(path.join(wd.config.inbox, 'prices_c.csv'), pricesCsv(30, 2, '2020-05-01'));
    await waitFor(() => batchesDone(worker) >= 3, 60_000, 'the batch after the inodes came back');
    expect(worker.logLines().filter((l) => l.kind === 'disk_full')).toHaveLength(2);
    // DuckDB resolves /proc/<pid>/root to "/" by name: read a copy taken by the kernel's path walk
    const taken = path.join(wd.dir, 'taken.duckdb');
    copyFileSync(path.join(seen, 'riskfold.read.duckdb'), taken);
    expect(await copiedFiles(taken)).toEqual({ files: 3, rows: 180 });
    worker.child.kill('SIGTERM');
    expect(await worker.exited).toEqual({ code: 0, signal: null });
  });
});

