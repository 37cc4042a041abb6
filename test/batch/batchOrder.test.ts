import { utimesSync } from 'node:fs';
import { afterEach, describe, expect, it } from 'vitest';
import { runBatch } from '../../src/batch/runBatch.ts';
import { refreshDerived } from '../../src/storage/derived.ts';
import { pricesCsv, writeCsv } from '../helpers/files.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';

/** Sets a file's arrival (modification time) to 18:00:<second> on 2026-04-10 UTC. */
function arrived(file: string, second: number): string {
  utimesSync(file, 0, new Date(Date.UTC(2026, 3, 10, 18, 0, second)));
  return file;
}

describe('runBatch: the order of one delivery and one run for it', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  it('applies securities, fx, prices, then positions, whatever the order they are given in', async () => {
    ws = await tempWorkspace();
    const inbox = ws.config.inbox;
    const files = [
      arrived(writeCsv(inbox, 'positions_0410.csv', [['date', 'portfolio_id', 'security_id', 'quantity'], ['2020-01-01', 'acct-growth', 'EQ-NORDWIND', '10']]), 1),
      arrived(writeCsv(inbox, 'prices_0410.csv', pricesCsv(30, 2, '2020-01-01').trim().split('\n').map((l) => l.split(','))), 2),
      arrived(writeCsv(inbox, 'fx_0410.csv', [['date', 'currency', 'rate'], ['2020-01-01', 'EUR', '1.1']]), 3),
      arrived(writeCsv(inbox, 'securities_0410.csv', [['security_id', 'currency'], ['EQ-NORDWIND', 'USD']]), 4),
    ];
    const summary = await runBatch(ws.db, ws.config, ws.log, files);
    expect(summary.files.map((f) => f.name)).toEqual(['securities_0410.csv', 'fx_0410.csv', 'prices_0410.csv', 'positions_0410.csv']);
    expect(summary.run).not.toBeNull();
  });

  it('applies a correction that landed after its original last, so it wins, even when its name sorts first', async () => {
    ws = await tempWorkspace();
    const header = ['date', 'security_id', 'price'];
    const original = arrived(writeCsv(ws.config.inbox, 'prices_z_0410.csv', [header, ['2020-01-02', 'EQ-NORDWIND', '101']]), 1);
    const correction = arrived(writeCsv(ws.config.inbox, 'prices_a_fix.csv', [header, ['2020-01-02', 'EQ-NORDWIND', '102.5']]), 2);
    const summary = await runBatch(ws.db, ws.config, ws.log, [correction, original]);
    expect(summary.files.map((f) => f.name)).toEqual(['prices_z_0410.csv', 'prices_a_fix.csv']);
    await refreshDerived(ws.db, ws.log);
    expect(await ws.db.all("select price from clean_prices where security_id = 'EQ-NORDWIND'")).toEqual([{ price: 102.5 }]);
  });

  it('runs nothing for a batch whose dates have no prices yet, and says so plainly', async () => {
    ws = await tempWorkspace();
    await runBatch(ws.db, ws.config, ws.log, [writeCsv(ws.config.inbox, 'prices_0101.csv', pricesCsv(30, 2, '2020-01-01').trim().split('\n').map((l) => l.split(',')))]);
    const runsBefore = await ws.db.all('select run_id from risk_runs');
    const positions = writeCsv(ws.config.inbox, 'positions_0301.csv', [['date', 'portfolio_id', 'security_id', 'quantity'], ['2020-03-01', 'acct-growth', 'EQ-NORDWIND', '10']]);
    const summary = await runBatch(ws.db, ws.config, ws.log, [positions]);
    expect(summary.files.map((f) => f.status)).toEqual(['ingested']);
    expect(summary.run).toBeNull();
    expect(summary.idle).toBe('nothing to compute: the files start on 2020-03-01, after the last priced date 2020-01-30; risk follows when prices for those dates arrive');
    expect(await ws.db.all('select run_id from risk_runs')).toEqual(runsBefore);
    expect(ws.logLines().find((l) => l.msg === summary.idle)).toMatchObject({ level: 30, stage: 'batch' });
  });
});
