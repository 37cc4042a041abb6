import { afterEach, describe, expect, it } from 'vitest';
import { insertPositions, insertPrices } from '../helpers/rawRows.ts';
import { defaultsWorkspace, type TempWorkspace } from '../helpers/workspace.ts';

let ws: TempWorkspace;
afterEach(() => ws.cleanup());

describe('hold_daily_positions', () => {
  it('carries each snapshot to the next one, drops zero quantities and a security the next snapshot leaves out', async () => {
    ws = await defaultsWorkspace();
    await insertPositions(ws.db, 1, [
      ['2024-03-04', 'acct-growth', 'EQ-NORDWIND', 10],
      ['2024-03-04', 'acct-growth', 'BD-KESTREL-28', 5],
      ['2024-03-04', 'acct-growth', 'EQ-SALTMARSH', 0],
    ]);
    // Saturday's snapshot takes effect on the next valuation date (Monday); it sold the bond
    await insertPositions(ws.db, 2, [['2024-03-09', 'acct-growth', 'EQ-NORDWIND', 12]]);
    // acct-income starts on Tuesday
    await insertPositions(ws.db, 3, [['2024-03-05', 'acct-income', 'BD-KESTREL-28', 7]]);
    await insertPrices(ws.db, 4, ['04', '05', '11'].map((day) => [`2024-03-${day}`, 'EQ-NORDWIND', 20, null]));

    const rows = await ws.db.all('select portfolio_id, date, security_id, quantity, snapshot_date from hold_daily_positions order by portfolio_id, date, security_id');
    expect(rows).toEqual([
      { portfolio_id: 'acct-growth', date: '2024-03-04', security_id: 'BD-KESTREL-28', quantity: 5, snapshot_date: '2024-03-04' },
      { portfolio_id: 'acct-growth', date: '2024-03-04', security_id: 'EQ-NORDWIND', quantity: 10, snapshot_date: '2024-03-04' },
      { portfolio_id: 'acct-growth', date: '2024-03-05', security_id: 'BD-KESTREL-28', quantity: 5, snapshot_date: '2024-03-04' },
      { portfolio_id: 'acct-growth', date: '2024-03-05', security_id: 'EQ-NORDWIND', quantity: 10, snapshot_date: '2024-03-04' },
      { portfolio_id: 'acct-growth', date: '2024-03-11', security_id: 'EQ-NORDWIND', quantity: 12, snapshot_date: '2024-03-09' },
      { portfolio_id: 'acct-income', date: '2024-03-05', security_id: 'BD-KESTREL-28', quantity: 7, snapshot_date: '2024-03-05' },
      { portfolio_id: 'acct-income', date: '2024-03-11', security_id: 'BD-KESTREL-28', quantity: 7, snapshot_date: '2024-03-05' },
    ]);
  });
});
