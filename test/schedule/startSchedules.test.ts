import { appendFileSync } from 'node:fs';
import { afterEach, describe, expect, it, vi } from 'vitest';
import type { Logger } from 'pino';
import { resolveConfig, type Config } from '../../src/config/load.ts';
import { RiskfoldError } from '../../src/errors.ts';
import { ingestFile } from '../../src/ingest/ingestFile.ts';
import { startSchedules } from '../../src/schedule/startSchedules.ts';
import type { Database } from '../../src/storage/database.ts';
import { writeCsv } from '../helpers/files.ts';
import { MINIMAL_CONFIG, tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';

describe('startSchedules', () => {
  let ws: TempWorkspace | undefined;
  let stop: (() => void) | undefined;
  afterEach(() => {
    stop?.();
    stop = undefined;
    vi.useRealTimers();
    ws?.cleanup();
  });

  /** A stand-in for the worker: its serial queue (recording what ran on it) and its delivery kick. */
  function host(db: Database, config: Config, log: Logger) {
    const ran: Promise<unknown>[] = [];
    const deliverNow = vi.fn();
    const exclusive = <T>(fn: (db: Database) => Promise<T>) => {
      const done = fn(db);
      ran.push(done);
      return done;
    };
    const republish = vi.fn();
    return { host: { config, log, exclusive, deliverNow, republish }, ran, deliverNow, republish };
  }

  it('runs the missing-data check at its cron time in the configured zone: on Monday it checks Friday', async () => {
    // 22:00 in Zurich is 21:00 UTC before the end-of-March clock change (CET = UTC+1)
    ws = await tempWorkspace({ schedule: { timezone: 'Europe/Zurich', retryAlerts: '0 0 1 1 *', checkpoint: '0 0 1 1 *' } });
    const { db, config, log } = ws;
    await db.run(
      "insert into ingested_files (name, sha256, kind, rows, status, min_date, max_date) values ('prices_0306.csv', 'x', 'prices', 3, 'ingested', '2026-03-06', '2026-03-06')",
    );
    vi.useFakeTimers({ now: new Date('2026-03-09T20:59:50Z'), toFake: ['setTimeout', 'clearTimeout', 'Date'] });
    const worker = host(db, config, log);
    stop = startSchedules(worker.host).stop;

    await vi.advanceTimersByTimeAsync(5_000);
    expect(worker.ran).toHaveLength(0);
    await vi.advanceTimersByTimeAsync(6_000);
    expect(worker.ran).toHaveLength(1);
    await expect(worker.ran[0]).resolves.toMatchObject({ expectedDate: '2026-03-06', missing: ['positions'] });
    vi.useRealTimers();
    const alerts = await db.all<{ alert_id: string }>('select alert_id from alerts order by alert_id');
    expect(alerts.map((a) => a.alert_id)).toEqual(['data-missing-positions-2026-03-06']);
    await vi.waitFor(() => expect(worker.deliverNow).toHaveBeenCalledTimes(1));
  });

  it('does not run the missing-data check on a weekend (default cron 1-5)', async () => {
    ws = await tempWorkspace();
    const { db, config, log } = ws;
    vi.useFakeTimers({ now: new Date('2026-03-07T21:59:00Z'), toFake: ['setTimeout', 'clearTimeout', 'Date'] });
    const worker = host(db, config, log);
    stop = startSchedules(worker.host).stop;
    // Saturday 22:00 and Sunday 22:00 UTC pass; only the two 02:30 checkpoints run on the queue.
    // A checkpoint does real database work that fake time does not wait for, and the jobs
    // refuse to overlap, so let the first one finish before the clock reaches the second.
    await vi.advanceTimersByTimeAsync(5 * 3600_000);
    await Promise.all(worker.ran);
    await vi.advanceTimersByTimeAsync(43 * 3600_000);
    vi.useRealTimers();
    expect(await Promise.all(worker.ran)).toEqual([undefined, undefined]);
    expect(await db.all('select * from alerts')).toEqual([]);
  });

  it('kicks a delivery of undelivered alerts at each retry time, beside the queue', async () => {
    ws = await tempWorkspace({ schedule: { retryAlerts: '*/5 * * * *', checkpoint: '0 0 1 1 *' } });
    const { db, config, log } = ws;
    vi.useFakeTimers({ now: new Date('2026-03-10T10:00:30Z'), toFake: ['setTimeout', 'clearTimeout', 'Date'] });
    const worker = host(db, config, log);
    stop = startSchedules(worker.host).stop;
    await vi.advanceTimersByTimeAsync(15 * 60_000);
    expect(worker.deliverNow).toHaveBeenCalledTimes(3);
    expect(worker.ran).toHaveLength(0);
    stop();
    await vi.advanceTimersByTimeAsync(15 * 60_000);
    expect(worker.deliverNow).toHaveBeenCalledTimes(3);
  });

  it('runs the full archive audit at its cron time on the queue and republishes the read copy when it found something', async () => {
    const off = '0 0 1 1 *';
    ws = await tempWorkspace({ schedule: { archiveAudit: '0 4 * * *', retryAlerts: off, checkpoint: off, missingData: { cron: off, expect: [] } } });
    const { db, config, log } = ws;
    const loaded = await ingestFile(db, config, log, writeCsv(config.inbox, 'prices_a.csv', [['date', 'security_id', 'price'], ['2026-03-09', 'EQ-A', '1']]));
    appendFileSync(loaded.movedTo, '2026-03-10,EQ-A,2\n');
    vi.useFakeTimers({ now: new Date('2026-03-10T03:59:50Z'), toFake: ['setTimeout', 'clearTimeout', 'Date'] });
    const worker = host(db, config, log);
    stop = startSchedules(worker.host).stop;
    await vi.advanceTimersByTimeAsync(11_000);
    expect(worker.ran).toHaveLength(1);
    vi.useRealTimers();
    await expect(worker.ran[0]).resolves.toMatchObject({ found: [{ fileId: loaded.fileId, finding: 'changed' }], hashed: 1 });
    await vi.waitFor(() => expect(worker.republish).toHaveBeenCalledTimes(1));
  });

  it('refuses a wrong cron expression or time zone when the config is read, naming the field', () => {
    const read = (schedule: object) => () => resolveConfig({ ...MINIMAL_CONFIG, schedule }, 'c.json');
    expect(read({ checkpoint: '61 2 * * *' })).toThrow(RiskfoldError);
    expect(read({ checkpoint: '61 2 * * *' })).toThrow(/"61 2 \* \* \*" is not a cron expression[\s\S]*schedule\.checkpoint/);
    expect(read({ archiveAudit: 'weekly' })).toThrow(/"weekly" is not a cron expression[\s\S]*schedule\.archiveAudit/);
    expect(read({ missingData: { cron: '0 25 * * *' } })).toThrow(/schedule\.missingData\.cron/);
    expect(read({ timezone: 'Mars/Olympus' })).toThrow(/"Mars\/Olympus" is not an IANA time zone[\s\S]*schedule\.timezone/);
  });
});
