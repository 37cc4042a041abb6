import { existsSync, statSync } from 'node:fs';
import { afterEach, describe, expect, it } from 'vitest';
import { localDate, previousBusinessDay } from '../../src/schedule/calendar.ts';
import { checkMissingData, checkpointDatabase } from '../../src/schedule/jobs.ts';
import type { Database } from '../../src/storage/database.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';

describe('previousBusinessDay', () => {
  // weekdays of these dates checked against a printed 2026 calendar (ISO 8601 weeks start on Monday)
  it('gives Friday for a Monday, the day before on other weekdays, Friday for a weekend', () => {
    expect(previousBusinessDay('2026-03-09')).toBe('2026-03-06'); // Monday -> Friday
    expect(previousBusinessDay('2026-03-10')).toBe('2026-03-09'); // Tuesday -> Monday
    expect(previousBusinessDay('2026-03-14')).toBe('2026-03-13'); // Saturday -> Friday
    expect(previousBusinessDay('2026-03-15')).toBe('2026-03-13'); // Sunday -> Friday
    expect(previousBusinessDay('2026-01-01')).toBe('2025-12-31'); // across the year
  });

  it('refuses a string that is not a calendar date', () => {
    expect(() => previousBusinessDay('2026-02-30')).toThrow(/not a date/);
  });
});

describe('localDate', () => {
  it('takes the calendar date in the schedule time zone (IANA tz database)', () => {
    const instant = new Date('2026-03-09T23:30:00Z');
    expect(localDate(instant, 'UTC')).toBe('2026-03-09');
    expect(localDate(instant, 'Asia/Tokyo')).toBe('2026-03-10'); // UTC+9
    expect(localDate(new Date('2026-03-10T03:00:00Z'), 'America/New_York')).toBe('2026-03-09'); // UTC-4 after 8 March 2026
  });
});

async function ingested(db: Database, kind: string, maxDate: string, status = 'ingested') {
  await db.run(
    `insert into ingested_files (name, sha256, kind, rows, status, min_date, max_date)
     values ($1, $2, $3, 10, $4, $5::date, $5::date)`,
    [`${kind}_${maxDate}.csv`, `sha-${kind}-${maxDate}-${status}`, kind, status, maxDate],
  );
}

describe('checkMissingData', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  it('on a Monday raises one data_missing alert per kind that has not arrived for Friday, once', async () => {
    ws = await tempWorkspace();
    const { db, config, log } = ws;
    await ingested(db, 'prices', '2026-03-06');
    await ingested(db, 'positions', '2026-03-05');
    await ingested(db, 'positions', '2026-03-06', 'rejected');
    const monday = new Date('2026-03-09T22:00:00Z');

    const outcome = await checkMissingData(db, config, log, monday);
    expect(outcome).toEqual({ expectedDate: '2026-03-06', missing: ['positions'], alertsRaised: 1 });
    const alerts = await db.all<{ alert_id: string; kind: string; as_of: string; portfolio_id: string | null; payload: string }>(
      'select alert_id, kind, as_of, portfolio_id, payload::varchar as payload from alerts',
    );
    expect(alerts).toHaveLength(1);
    expect(alerts[0]).toMatchObject({ alert_id: 'data-missing-positions-2026-03-06', kind: 'data_missing', as_of: '2026-03-06', portfolio_id: null });
    expect(JSON.parse(alerts[0].payload)).toMatchObject({
      file_kind: 'positions',
      expected_date: '2026-03-06',
      latest_date: '2026-03-05',
      text: 'no positions file for 2026-03-06 has arrived (latest positions date received: 2026-03-05)',
    });

    expect((await checkMissingData(db, config, log, new Date('2026-03-09T22:05:00Z'))).alertsRaised).toBe(0);
    await ingested(db, 'positions', '2026-03-06');
    expect((await checkMissingData(db, config, log, monday)).missing).toEqual([]);
  });

  it('judges the business day in the configured time zone', async () => {
    ws = await tempWorkspace({ schedule: { timezone: 'Asia/Tokyo' } });
    const { db, config, log } = ws;
    // Monday 22:00 UTC is already Tuesday in Tokyo: Monday's files are expected
    const outcome = await checkMissingData(db, config, log, new Date('2026-03-09T22:00:00Z'));
    expect(outcome.expectedDate).toBe('2026-03-09');
    expect(outcome.missing).toEqual(['prices', 'positions']);
  });
});

describe('checkpointDatabase', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  it('writes the WAL into the database file', async () => {
    ws = await tempWorkspace();
    const { db, config, log } = ws;
    await ingested(db, 'prices', '2026-03-06');
    const wal = `${config.database}.wal`;
    expect(existsSync(wal) && statSync(wal).size > 0).toBe(true);
    await checkpointDatabase(db, config, log, new Date('2026-03-10T02:30:00Z'));
    expect(existsSync(wal) && statSync(wal).size > 0).toBe(false);
  });
});
