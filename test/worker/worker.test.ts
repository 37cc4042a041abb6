import { existsSync, readFileSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { memoryLogger } from '../../src/log/logger.ts';
import { openDatabase } from '../../src/storage/database.ts';
import { startWorker, type Worker } from '../../src/worker/startWorker.ts';
import { pidFilePath } from '../../src/worker/workerPidFile.ts';
import { waitFor } from '../helpers/wait.ts';
import { pricesCsv } from '../helpers/files.ts';
import { workerDir, type WorkerDir } from '../helpers/workspace.ts';

type Line = Record<string, unknown>;

describe('startWorker (in this process)', () => {
  let wd: WorkerDir | undefined;
  let worker: Worker | undefined;
  afterEach(async () => {
    await worker?.stop();
    worker = undefined;
    wd?.cleanup();
  });

  async function filesTable(wdir: WorkerDir) {
    const db = await openDatabase(wdir.config.database, { readOnly: true });
    try {
      return await db.all<{ file_id: number; name: string; status: string; rows: string }>(
        'select file_id, name, status, rows::varchar as rows from ingested_files order by file_id',
      );
    } finally {
      db.close();
    }
  }

  it('catches up on the files already in the inbox in one batch, oldest first, then writes and removes its pid file', async () => {
    wd = workerDir();
    writeFileSync(path.join(wd.config.inbox, 'prices_20200101.csv'), pricesCsv(5));
    writeFileSync(path.join(wd.config.inbox, 'prices_20200201.csv'), pricesCsv(5, 4, '2020-02-01'));
    const { log, lines } = memoryLogger();
    worker = await startWorker(wd.config, log);
    expect(existsSync(pidFilePath(wd.config))).toBe(true);
    const batch = await waitFor(() => lines().find((l) => l.msg === 'batch done'), 10_000, 'the catch-up batch');
    expect((batch.files as Line[]).map((f) => f.name)).toEqual(['prices_20200101.csv', 'prices_20200201.csv']);
    await worker.stop();
    worker = undefined;
    expect(existsSync(pidFilePath(wd.config))).toBe(false);
    expect((await filesTable(wd)).map((f) => [f.name, f.status, f.rows])).toEqual([
      ['prices_20200101.csv', 'ingested', '20'],
      ['prices_20200201.csv', 'ingested', '20'],
    ]);
    expect(existsSync(wd.config.readCopy)).toBe(true);
  });

  it('processes a file that arrives while another is being loaded next, as its own batch', async () => {
    wd = workerDir();
    const { log, lines } = memoryLogger();
    worker = await startWorker(wd.config, log);
    await worker.idle();
    const big = path.join(wd.config.inbox, 'prices_big.csv');
    writeFileSync(big, pricesCsv(3000, 40, '2010-01-01')); // 120,000 rows: loading takes a moment
    await waitFor(() => lines().some((l) => l.msg === 'ingesting file' && l.file === 'prices_big.csv'), 10_000, 'the big file to start');
    writeFileSync(path.join(wd.config.inbox, 'prices_late.csv'), pricesCsv(2, 4, '2019-01-01'));
    await waitFor(() => lines().filter((l) => l.msg === 'batch done').length >= 3, 20_000, 'two batches after the catch-up');
    const batches = lines()
      .filter((l) => l.msg === 'batch done')
      .map((l) => (l.files as Line[]).map((f) => f.name));
    expect(batches).toEqual([[], ['prices_big.csv'], ['prices_late.csv']]);
    await worker.stop();
    worker = undefined;
    expect((await filesTable(wd)).map((f) => [f.name, f.rows])).toEqual([
      ['prices_big.csv', '120000'],
      ['prices_late.csv', '8'],
    ]);
  });

  it('delivers the alert of a limit breach from its loop and republishes the read copy with it delivered', async () => {
    wd = workerDir();
    // two invented securities swinging 2-3% a day: an annualized volatility near
    // 0.03 * sqrt(252) = 0.48, far over the 0.15 limit of the minimal config
    const lines = ['date,security_id,price'];
    let a = 100;
    let b = 50;
    for (let d = 0; d < 80; d++) {
      const date = new Date(Date.UTC(2020, 0, 1) + d * 86_400_000).toISOString().slice(0, 10);
      a *= Math.exp(d % 2 === 0 ? 0.03 : -0.03);
      b *= Math.exp(d % 3 === 0 ? 0.03 : -0.02);
      lines.push(`${date},EQ-NORDWIND,${a}`, `${date},EQ-SALTMARSH,${b}`);
    }
    writeFileSync(path.join(wd.config.inbox, 'prices_2020.csv'), `${lines.join('\n')}\n`);
    writeFileSync(
      path.join(wd.config.inbox, 'positions_2020.csv'),
      'date,portfolio_id,security_id,quantity\n2020-01-01,acct-growth,EQ-NORDWIND,100\n2020-01-01,acct-growth,EQ-SALTMARSH,200\n',
    );
    worker = await startWorker(wd.config, memoryLogger().log);
    const alertsFile = wd.config.alerts.file!;
    const delivered = await waitFor(
      () => existsSync(alertsFile) && readFileSync(alertsFile, 'utf8').trim().split('\n').map((l) => JSON.parse(l) as Line),
      30_000,
      'an alert in the alerts file',
    );
    // a history load: the opening is weeks before the last date, so the current state comes as one limit_state alert
    expect(delivered).toEqual([expect.objectContaining({ kind: 'limit_state', portfolio_id: 'acct-growth' })]);
    // the delivery is recorded in the read copy too, so status shows nothing undelivered
    await waitFor(
      async () => {
        const copy = await openDatabase(wd!.config.readCopy, { readOnly: true });
        try {
          const [{ n }] = await copy.all<{ n: number }>('select count(*)::integer as n from alerts where delivered_at is not null');
          return n === 1;
        } finally {
          copy.close();
        }
      },
      30_000,
      'the delivered alert in the read copy',
    );
  });
});
