import { appendFileSync, existsSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { openDatabase } from '../../src/storage/database.ts';
import { waitFor } from '../helpers/wait.ts';
import { inProcessWorker } from '../helpers/workerFixture.ts';

describe('the worker and a delivery written in two goes', () => {
  const workers = inProcessWorker();

  it('holds the half written before a pause longer than watch.stableMs, and loads the whole file once the rest arrives', async () => {
    const { wd, lines } = await workers.start();
    const file = path.join(wd.config.inbox, 'prices_0410.csv');
    writeFileSync(file, 'date,security_id,price\n2026-04-10,EQ-NORDWIND,102\n2026-04-10,EQ-SALTMARSH,3293');
    await waitFor(() => lines().find((l) => l.msg === 'file held in the inbox' && l.file === 'prices_0410.csv'), 10_000, 'the hold');
    expect(existsSync(file)).toBe(true);
    appendFileSync(file, '04.23\n');
    await waitFor(() => lines().find((l) => l.msg === 'file ingested' && l.file === 'prices_0410.csv'), 10_000, 'the load');
    await workers.stop();
    const db = await openDatabase(wd.config.database, { readOnly: true });
    try {
      expect(await db.all('select security_id, price from prices order by security_id')).toEqual([
        { security_id: 'EQ-NORDWIND', price: 102 },
        { security_id: 'EQ-SALTMARSH', price: 329304.23 },
      ]);
      expect(await db.all("select count(*)::integer as n from ingested_files where status = 'ingested'")).toEqual([{ n: 1 }]);
    } finally {
      db.close();
    }
  });
});
