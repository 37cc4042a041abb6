import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { insertFx, insertPositions, insertPrices, insertSecurities } from '../helpers/rawRows.ts';
import { defaultsWorkspace, type TempWorkspace } from '../helpers/workspace.ts';

let ws: TempWorkspace;
beforeEach(async () => {
  ws = await defaultsWorkspace();
});
afterEach(() => ws.cleanup());

describe('clean_prices', () => {
  it('takes the latest delivery of a corrected price and keeps the earlier row in the raw table', async () => {
    await insertPrices(ws.db, 1, [
      ['2024-03-04', 'EQ-NORDWIND', 41.5, 'EUR'],
      ['2024-03-04', 'EQ-SALTMARSH', 12.0, null],
    ]);
    // file 2 corrects one price of file 1
    await insertPrices(ws.db, 2, [['2024-03-04', 'EQ-NORDWIND', 41.25, 'EUR']]);

    const clean = await ws.db.all('select security_id, price, file_id from clean_prices order by security_id');
    expect(clean).toEqual([
      { security_id: 'EQ-NORDWIND', price: 41.25, file_id: 2 },
      { security_id: 'EQ-SALTMARSH', price: 12.0, file_id: 1 },
    ]);
    const raw = await ws.db.all("select price, file_id from prices where security_id = 'EQ-NORDWIND' order by file_id");
    expect(raw).toEqual([
      { price: 41.5, file_id: 1 },
      { price: 41.25, file_id: 2 },
    ]);
  });
});

describe('clean_positions', () => {
  it('replaces a whole snapshot: a security absent from the newer file for the same date and portfolio is gone', async () => {
    await insertPositions(ws.db, 1, [
      ['2024-03-04', 'acct-growth', 'EQ-NORDWIND', 100],
      ['2024-03-04', 'acct-growth', 'BD-KESTREL-28', 50],
      ['2024-03-04', 'acct-income', 'BD-KESTREL-28', 10],
    ]);
    // the corrected acct-growth snapshot no longer lists BD-KESTREL-28; acct-income is untouched
    await insertPositions(ws.db, 2, [['2024-03-04', 'acct-growth', 'EQ-NORDWIND', 120]]);

    const clean = await ws.db.all('select portfolio_id, security_id, quantity, file_id from clean_positions order by portfolio_id, security_id');
    expect(clean).toEqual([
      { portfolio_id: 'acct-growth', security_id: 'EQ-NORDWIND', quantity: 120, file_id: 2 },
      { portfolio_id: 'acct-income', security_id: 'BD-KESTREL-28', quantity: 10, file_id: 1 },
    ]);
  });

  it('tells until when each snapshot holds: the date of the portfolio\'s next snapshot, null for the latest', async () => {
    await insertPositions(ws.db, 1, [['2024-03-04', 'acct-growth', 'EQ-NORDWIND', 100]]);
    await insertPositions(ws.db, 2, [['2024-03-08', 'acct-growth', 'EQ-NORDWIND', 90]]);
    const snapshots = await ws.db.all('select snapshot_date, file_id, held_until from clean_snapshots order by snapshot_date');
    expect(snapshots).toEqual([
      { snapshot_date: '2024-03-04', file_id: 1, held_until: '2024-03-08' },
      { snapshot_date: '2024-03-08', file_id: 2, held_until: null },
    ]);
  });
});

describe('clean_fx and clean_securities', () => {
  it('take the latest delivery per date+currency and per security', async () => {
    await insertFx(ws.db, 1, [['2024-03-04', 'EUR', 1.08], ['2024-03-04', 'GBP', 1.27]]);
    await insertFx(ws.db, 3, [['2024-03-04', 'EUR', 1.085]]);
    await insertSecurities(ws.db, 1, [['EQ-NORDWIND', 'Nordwind Turbines', 'equity', 'EUR']]);
    await insertSecurities(ws.db, 4, [['EQ-NORDWIND', 'Nordwind Turbines AG', 'equity', 'EUR']]);

    expect(await ws.db.all('select currency, rate, file_id from clean_fx order by currency')).toEqual([
      { currency: 'EUR', rate: 1.085, file_id: 3 },
      { currency: 'GBP', rate: 1.27, file_id: 1 },
    ]);
    expect(await ws.db.all('select security_id, name from clean_securities')).toEqual([
      { security_id: 'EQ-NORDWIND', name: 'Nordwind Turbines AG' },
    ]);
  });
});
