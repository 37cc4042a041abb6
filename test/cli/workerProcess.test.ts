import { existsSync, readdirSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { openDatabase, type Database } from '../../src/storage/database.ts';
import { pidFilePath } from '../../src/worker/workerPidFile.ts';
import { waitFor } from '../helpers/wait.ts';
import { pricesCsv } from '../helpers/files.ts';
import { workerDir, type WorkerDir } from '../helpers/workspace.ts';
import { endCli, runCli, startCli, type RunningCli } from './cliProcess.ts';

const BIG_DAYS = 5000;
const BIG_SECURITIES = 100; // 500,000 rows, about 17 MB: an ingest that takes a while
// 5,000 calendar days from here end in 2023: no row is dated beyond the receiving day
const BIG_START = '2010-01-01';

describe('riskfold watch as a real process', () => {
  let wd: WorkerDir | undefined;
  const children: RunningCli[] = [];
  let reader: Database | undefined;
  afterEach(async () => {
    reader?.close();
    reader = undefined;
    for (const c of children.splice(0)) await endCli(c);
    wd?.cleanup();
  });

  function watch(): RunningCli {
    const c = startCli(['watch', '--config', wd!.configPath]);
    children.push(c);
    return c;
  }
  const logged = (c: RunningCli, msg: string, file?: string) =>
    c.logLines().some((l) => l.msg === msg && (file === undefined || l.file === file));
  async function counts(): Promise<{ rows: number; loads: number }> {
    const db = await openDatabase(wd!.config.database, { readOnly: true });
    try {
      const [r] = await db.all<{ rows: number; loads: number }>(
        "select (select count(*)::integer from prices) as rows, (select count(*)::integer from ingested_files where name = 'prices_big.csv' and status = 'ingested') as loads",
      );
      return r;
    } finally {
      db.close();
    }
  }

  it('refuses a second worker on the same database, naming the first one, also after the first published its read copy', async () => {
    wd = workerDir();
    const first = watch();
    // the catch-up batch publishes the read copy: copying the file must not drop DuckDB's lock
    await waitFor(() => logged(first, 'batch done'), 20_000, 'the first worker');
    const second = runCli(['watch', '--config', wd.configPath], 20_000);
    expect(second.status).not.toBe(0);
    expect(second.stderr.trim().split('\n')).toHaveLength(1);
    expect(second.stderr).toContain(`a riskfold worker already owns ${wd.config.database} (pid ${first.child.pid}`);
  });

  it('on SIGTERM finishes the file it is loading, closes cleanly and exits 0', async () => {
    wd = workerDir();
    const w = watch();
    await waitFor(() => logged(w, 'watching the inbox'), 20_000, 'the worker');
    writeFileSync(path.join(wd.config.inbox, 'prices_big.csv'), pricesCsv(BIG_DAYS, BIG_SECURITIES, BIG_START));
    await waitFor(() => logged(w, 'ingesting file', 'prices_big.csv'), 20_000, 'the load to start');
    w.child.kill('SIGTERM');
    expect(await w.exited).toEqual({ code: 0, signal: null });
    expect(logged(w, 'file ingested')).toBe(true);
    expect(await counts()).toEqual({ rows: BIG_DAYS * BIG_SECURITIES, loads: 1 });
    expect(readdirSync(wd.config.inbox)).toEqual([]);
    expect(existsSync(pidFilePath(wd.config))).toBe(false);
  });

  it('killed with SIGKILL in the middle of a file, then restarted, loses nothing and counts nothing twice', async () => {
    wd = workerDir();
    const w = watch();
    await waitFor(() => logged(w, 'watching the inbox'), 20_000, 'the worker');
    writeFileSync(path.join(wd.config.inbox, 'prices_big.csv'), pricesCsv(BIG_DAYS, BIG_SECURITIES, BIG_START));
    await waitFor(() => logged(w, 'ingesting file', 'prices_big.csv'), 20_000, 'the load to start');
    w.child.kill('SIGKILL');
    expect((await w.exited).signal).toBe('SIGKILL');
    const midFile = !logged(w, 'file ingested');

    const again = watch();
    await waitFor(() => logged(again, 'batch done'), 30_000, 'the catch-up after the restart');
    again.child.kill('SIGTERM');
    expect((await again.exited).code).toBe(0);
    expect(await counts()).toEqual({ rows: BIG_DAYS * BIG_SECURITIES, loads: 1 });
    expect(readdirSync(wd.config.inbox)).toEqual([]);
    // the kill landed before the commit, so the file was still in the inbox for the restart
    expect(midFile).toBe(true);
  });

  it('serves sql and status from the read copy while it runs, and a reader holding the copy does not hold it up', async () => {
    wd = workerDir();
    const w = watch();
    await waitFor(() => logged(w, 'watching the inbox'), 20_000, 'the worker');
    writeFileSync(path.join(wd.config.inbox, 'prices_first.csv'), pricesCsv(3));
    const countRows = () => {
      const r = runCli(['sql', 'select count(*) as n from prices', '--config', wd!.configPath, '--format', 'json']);
      return r.status === 0 ? { n: (JSON.parse(r.stdout) as { n: number }[])[0].n, stderr: r.stderr } : null;
    };
    const first = await waitFor(
      () => {
        const r = countRows();
        return r?.n === 12 ? r : null;
      },
      20_000,
      'the first file in the read copy',
    );
    expect(first.stderr).toMatch(/a worker holds .*; reading the copy it published at \d{4}-\d\d-\d\dT/);

    const status = runCli(['status', '--details', '--config', wd.configPath, '--format', 'json']);
    expect(status.status).toBe(0);
    const body = JSON.parse(status.stdout) as { source: string; lastFiles: { rows: { name: string; status: string }[] } };
    expect(body.source).toBe('read_copy');
    expect(body.lastFiles.rows).toEqual([expect.objectContaining({ name: 'prices_first.csv', status: 'ingested' })]);

    // an outside client keeps the copy open; the worker goes on and publishes past it
    reader = await openDatabase(wd.config.readCopy, { readOnly: true });
    writeFileSync(path.join(wd.config.inbox, 'prices_second.csv'), pricesCsv(2, 4, '2021-01-01'));
    await waitFor(() => countRows()?.n === 20, 20_000, 'the second file in the read copy');
    // the open reader still sees the copy it opened: never a half-written state
    const [{ n }] = await reader.all<{ n: number }>('select count(*)::integer as n from prices');
    expect(n).toBe(12);
    expect(w.child.exitCode).toBeNull();
  });

  it('sql refuses a write while the worker runs, in one line, non-zero', async () => {
    wd = workerDir();
    const w = watch();
    await waitFor(() => logged(w, 'batch done'), 20_000, 'the worker');
    const r = runCli(['sql', 'delete from prices', '--config', wd.configPath]);
    expect(r.status).not.toBe(0);
    expect(r.stderr).toMatch(/refused: DELETE statements may write/);
  });
});
