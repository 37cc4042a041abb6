import { afterEach, describe, expect, it, vi } from 'vitest';
import { resolveConfig } from '../../src/config/load.ts';
import { RiskfoldError } from '../../src/errors.ts';
import { startSchedules } from '../../src/schedule/startSchedules.ts';
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

  /** A stand-in for the worker's serial queue that records what ran on it. */
  function queue() {
    const ran: { name: string; done: Promise<void> }[] = [];
    const enqueue = (name: string, job: () => Promise<void>) => {
      const done = job();
      ran.push({ name, done });
      return done;
    };
    return { ran, enqueue };
  }

  it('runs the missing-data check at its cron time in the configured zone: on Monday it checks Friday', async () => {
    // 22:00 in Zurich is 21:00 UTC before the end-of-March clock change (CET = UTC+1)
    ws = await tempWorkspace({ schedule: { timezone: 'Europe/Zurich', retryAlerts: '0 0 1 1 *', checkpoint: '0 0 1 1 *' } });
    const { db, config, log } = ws;
    await db.run(
      "insert into ingested_files (name, sha256, kind, rows, status, min_date, max_date) values ('prices_0306.csv', 'x', 'prices', 3, 'ingested', '2026-03-06', '2026-03-06')",
    );
    vi.useFakeTimers({ now: new Date('2026-03-09T20:59:50Z'), toFake: ['setTimeout', 'clearTimeout', 'Date'] });
    const { ran, enqueue } = queue();
    const deliver = vi.fn();
    stop = startSchedules({ db, config, log, enqueue, deliver }).stop;

    await vi.advanceTimersByTimeAsync(5_000);
    expect(ran).toEqual([]);
    await vi.advanceTimersByTimeAsync(6_000);
    expect(ran.map((r) => r.name)).toEqual(['missing-data']);
    await ran[0].done;
    vi.useRealTimers();
    const alerts = await db.all<{ alert_id: string }>('select alert_id from alerts order by alert_id');
    expect(alerts.map((a) => a.alert_id)).toEqual(['data-missing-positions-2026-03-06']);
    await vi.waitFor(() => expect(deliver).toHaveBeenCalledTimes(1));
  });

  it('does not run the missing-data check on a weekend (default cron 1-5)', async () => {
    ws = await tempWorkspace();
    const { db, config, log } = ws;
    vi.useFakeTimers({ now: new Date('2026-03-07T21:59:00Z'), toFake: ['setTimeout', 'clearTimeout', 'Date'] });
    const { ran, enqueue } = queue();
    stop = startSchedules({ db, config, log, enqueue, deliver: () => undefined }).stop;
    // Saturday 22:00 and Sunday 22:00 UTC pass; the 02:30 checkpoints run
    await vi.advanceTimersByTimeAsync(2 * 24 * 3600_000);
    expect(ran.map((r) => r.name)).toEqual(['checkpoint', 'checkpoint']);
    vi.useRealTimers();
    await Promise.all(ran.map((r) => r.done));
  });

  it('kicks a delivery of undelivered alerts at each retry time, beside the queue', async () => {
    ws = await tempWorkspace({ schedule: { retryAlerts: '*/5 * * * *', checkpoint: '0 0 1 1 *' } });
    const { db, config, log } = ws;
    vi.useFakeTimers({ now: new Date('2026-03-10T10:00:30Z'), toFake: ['setTimeout', 'clearTimeout', 'Date'] });
    const { ran, enqueue } = queue();
    const deliver = vi.fn();
    stop = startSchedules({ db, config, log, enqueue, deliver }).stop;
    await vi.advanceTimersByTimeAsync(15 * 60_000);
    expect(deliver).toHaveBeenCalledTimes(3);
    expect(ran).toEqual([]);
    stop();
    await vi.advanceTimersByTimeAsync(15 * 60_000);
    expect(deliver).toHaveBeenCalledTimes(3);
  });

  it('names the config field of a wrong cron expression or time zone', async () => {
    ws = await tempWorkspace();
    const { db, log } = ws;
    const configPath = ws.config.configPath;
    const start = (schedule: object) => () =>
      startSchedules({ db, config: resolveConfig({ ...MINIMAL_CONFIG, schedule }, configPath), log, enqueue: async () => undefined });
    expect(start({ checkpoint: '61 2 * * *' })).toThrow(RiskfoldError);
    expect(start({ checkpoint: '61 2 * * *' })).toThrow(/schedule\.checkpoint "61 2 \* \* \*" is not a cron expression/);
    expect(start({ timezone: 'Mars/Olympus' })).toThrow(/schedule\.timezone "Mars\/Olympus" is not an IANA time zone/);
  });
});
