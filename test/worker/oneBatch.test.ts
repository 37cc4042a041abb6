import { writeFileSync } from 'node:fs';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { pricesCsv } from '../helpers/files.ts';
import { waitFor } from '../helpers/wait.ts';
import { inProcessWorker } from '../helpers/workerFixture.ts';

describe('the worker and one business day\'s files landing together', () => {
  const workers = inProcessWorker();

  it('makes one batch of files landing within watch.settleMs of each other, prices before positions, and one run', async () => {
    const { wd, worker, lines } = await workers.start({ watch: { stableMs: 200, pollMs: 50, settleMs: 1500, maxBatchWaitMs: 10_000 } });
    const inbox = wd.config.inbox;
    const pause = () => new Promise((resolve) => setTimeout(resolve, 400));
    // positions first and prices last: the day (prices and positions, the default
    // schedule.missingData.expect) is whole only with the last file, so each pause is the settle window's
    writeFileSync(path.join(inbox, 'positions_0410.csv'), 'date,portfolio_id,security_id,quantity\n2020-01-01,acct-growth,EQ-NORDWIND,10\n');
    await pause();
    writeFileSync(path.join(inbox, 'securities_0410.csv'), 'security_id,currency\nEQ-NORDWIND,USD\n');
    await pause();
    writeFileSync(path.join(inbox, 'prices_0410.csv'), pricesCsv(30, 2, '2020-01-01'));
    const batches = await waitFor(() => {
      const done = lines().filter((l) => l.msg === 'batch done');
      return done.length >= 2 ? done : null;
    }, 15_000, 'the batch after the catch-up');
    expect((batches[1].files as { name: string }[]).map((f) => f.name)).toEqual(['securities_0410.csv', 'prices_0410.csv', 'positions_0410.csv']);
    expect(batches[1].runId).not.toBeNull();
    await worker.idle();
    expect(lines().filter((l) => l.msg === 'batch done')).toHaveLength(2);
  });

  it('starts the batch of a whole day (prices and positions) watch.wholeDaySettleMs after its last file, not settleMs', async () => {
    // a settle window far beyond the wait below: only the early close can start this batch in time
    const { wd, worker, lines } = await workers.start({ watch: { stableMs: 200, pollMs: 50, settleMs: 600_000, wholeDaySettleMs: 300, maxBatchWaitMs: 600_000 } });
    const inbox = wd.config.inbox;
    writeFileSync(path.join(inbox, 'prices_0410.csv'), pricesCsv(30, 2, '2020-01-01'));
    writeFileSync(path.join(inbox, 'positions_0410.csv'), 'date,portfolio_id,security_id,quantity\n2020-01-01,acct-growth,EQ-NORDWIND,10\n');
    const batches = await waitFor(() => {
      const done = lines().filter((l) => l.msg === 'batch done');
      return done.length >= 2 ? done : null;
    }, 120_000, 'the whole day\'s batch well before watch.settleMs');
    expect((batches[1].files as { name: string }[]).map((f) => f.name)).toEqual(['prices_0410.csv', 'positions_0410.csv']);
    expect(batches[1].runId).not.toBeNull();
    // the wait allows for a busy machine; it is still a fifth of watch.settleMs
  }, 180_000);
});
