import { afterEach, describe, expect, it } from 'vitest';
import { expectRowsClose, insertFx, insertPositions, insertPrices, insertSecurities } from '../helpers/rawRows.ts';
import { defaultsWorkspace, type TempWorkspace } from '../helpers/workspace.ts';

let ws: TempWorkspace;
afterEach(() => ws.cleanup());

// 2024-03-04 is a Monday; the week runs to Friday 2024-03-08.
describe('align_valuation_dates', () => {
  it('counts only dates on which a held security has a price', async () => {
    ws = await defaultsWorkspace();
    await insertPositions(ws.db, 1, [
      ['2024-03-04', 'acct-growth', 'EQ-SALTMARSH', 100],
      ['2024-03-04', 'acct-growth', 'CASH:USD', 500],
    ]);
    // acct-growth sells EQ-SALTMARSH on Wednesday and buys EQ-NORDWIND
    await insertPositions(ws.db, 2, [['2024-03-06', 'acct-growth', 'EQ-NORDWIND', 10]]);
    await insertPrices(ws.db, 3, [
      ['2024-03-01', 'EQ-SALTMARSH', 9.5, null], // before the first snapshot
      ['2024-03-04', 'EQ-SALTMARSH', 10, null],
      ['2024-03-05', 'EQ-OUTSIDER', 7, null], // never held
      ['2024-03-05', 'EQ-SALTMARSH', 11, null],
      ['2024-03-06', 'EQ-NORDWIND', 20, null],
      ['2024-03-07', 'EQ-SALTMARSH', 12, null], // no longer held
      ['2024-03-08', 'CASH:USD', 1, null], // cash never makes a valuation date
      ['2024-03-11', 'EQ-NORDWIND', 21, null],
    ]);
    const dates = await ws.db.all('select date, date_index from align_valuation_dates order by date');
    expect(dates).toEqual([
      { date: '2024-03-04', date_index: 1 },
      { date: '2024-03-05', date_index: 2 },
      { date: '2024-03-06', date_index: 3 },
      { date: '2024-03-11', date_index: 4 },
    ]);
  });

  it('sees a security held by one portfolio while another portfolio\'s later snapshot has dropped it', async () => {
    ws = await defaultsWorkspace();
    // acct-income holds EQ-SALTMARSH from Monday on (one snapshot, still in effect);
    // acct-growth holds it on Tuesday only. On Thursday only acct-income's holding counts.
    await insertPositions(ws.db, 1, [['2024-03-04', 'acct-income', 'EQ-SALTMARSH', 5]]);
    await insertPositions(ws.db, 2, [['2024-03-05', 'acct-growth', 'EQ-SALTMARSH', 1]]);
    await insertPositions(ws.db, 3, [['2024-03-06', 'acct-growth', 'CASH:USD', 100]]);
    await insertPrices(ws.db, 4, [['2024-03-07', 'EQ-SALTMARSH', 12, null]]);
    expect(await ws.db.all('select date from align_valuation_dates')).toEqual([{ date: '2024-03-07' }]);
  });
});

describe('align_prices', () => {
  it('carries a price across one market\'s holiday, flagged stale, while the other market stays daily', async () => {
    ws = await defaultsWorkspace({ risk: { maxStaleDays: 2 } });
    await insertSecurities(ws.db, 1, [['EQ-NORDWIND', 'Nordwind Turbines', 'equity', 'EUR']]);
    await insertPositions(ws.db, 2, [
      ['2024-03-04', 'acct-growth', 'EQ-NORDWIND', 10],
      ['2024-03-04', 'acct-growth', 'EQ-SALTMARSH', 100],
    ]);
    // Tuesday 2024-03-05 is a holiday for EQ-NORDWIND's market only
    await insertPrices(ws.db, 3, [
      ['2024-03-04', 'EQ-NORDWIND', 20, null],
      ['2024-03-04', 'EQ-SALTMARSH', 10, null],
      ['2024-03-05', 'EQ-SALTMARSH', 11, null],
      ['2024-03-06', 'EQ-NORDWIND', 22, null],
      ['2024-03-06', 'EQ-SALTMARSH', 12, null],
    ]);
    const rows = await ws.db.all('select date, security_id, currency, price_local, observed_on, stale_days, is_stale from align_prices order by security_id, date');
    expect(rows).toEqual([
      { date: '2024-03-04', security_id: 'EQ-NORDWIND', currency: 'EUR', price_local: 20, observed_on: '2024-03-04', stale_days: 0, is_stale: false },
      { date: '2024-03-05', security_id: 'EQ-NORDWIND', currency: 'EUR', price_local: 20, observed_on: '2024-03-04', stale_days: 1, is_stale: true },
      { date: '2024-03-06', security_id: 'EQ-NORDWIND', currency: 'EUR', price_local: 22, observed_on: '2024-03-06', stale_days: 0, is_stale: false },
      { date: '2024-03-04', security_id: 'EQ-SALTMARSH', currency: 'USD', price_local: 10, observed_on: '2024-03-04', stale_days: 0, is_stale: false },
      { date: '2024-03-05', security_id: 'EQ-SALTMARSH', currency: 'USD', price_local: 11, observed_on: '2024-03-05', stale_days: 0, is_stale: false },
      { date: '2024-03-06', security_id: 'EQ-SALTMARSH', currency: 'USD', price_local: 12, observed_on: '2024-03-06', stale_days: 0, is_stale: false },
    ]);
    // local returns: EQ-SALTMARSH ln(11/10) on Tuesday and ln(12/11) on Wednesday; EQ-NORDWIND
    // ln(20/20) = 0 over the holiday and the catch-up ln(22/20) on Wednesday
    const returns = await ws.db.all('select security_id, date, log_return_local, is_stale from ret_securities order by security_id, date');
    expectRowsClose(returns, [
      { security_id: 'EQ-NORDWIND', date: '2024-03-05', log_return_local: 0, is_stale: true },
      { security_id: 'EQ-NORDWIND', date: '2024-03-06', log_return_local: Math.log(22 / 20), is_stale: false },
      { security_id: 'EQ-SALTMARSH', date: '2024-03-05', log_return_local: Math.log(11 / 10), is_stale: false },
      { security_id: 'EQ-SALTMARSH', date: '2024-03-06', log_return_local: Math.log(12 / 11), is_stale: false },
    ], 14);
  });

  it('leaves the price null once it is older than max_stale_days valuation dates', async () => {
    ws = await defaultsWorkspace({ risk: { maxStaleDays: 2 } });
    await insertPositions(ws.db, 1, [
      ['2024-03-04', 'acct-growth', 'EQ-NORDWIND', 10],
      ['2024-03-04', 'acct-growth', 'EQ-SALTMARSH', 100],
    ]);
    // EQ-NORDWIND is priced on Monday only; EQ-SALTMARSH every day makes the valuation dates
    await insertPrices(ws.db, 2, [
      ['2024-03-04', 'EQ-NORDWIND', 20, null],
      ...['04', '05', '06', '07', '08'].map((day) => [`2024-03-${day}`, 'EQ-SALTMARSH', 10, null]),
    ]);
    const rows = await ws.db.all("select date, price_local, stale_days from align_prices where security_id = 'EQ-NORDWIND' order by date");
    // stale_days 1 and 2 are within the limit of 2; 3 and 4 are past it
    expect(rows).toEqual([
      { date: '2024-03-04', price_local: 20, stale_days: 0 },
      { date: '2024-03-05', price_local: 20, stale_days: 1 },
      { date: '2024-03-06', price_local: 20, stale_days: 2 },
      { date: '2024-03-07', price_local: null, stale_days: 3 },
      { date: '2024-03-08', price_local: null, stale_days: 4 },
    ]);
  });

  it('takes the currency from the price row, else the securities table, else the base currency', async () => {
    ws = await defaultsWorkspace({ baseCurrency: 'CHF' });
    await insertSecurities(ws.db, 1, [
      ['EQ-NORDWIND', null, null, 'EUR'],
      ['EQ-FJORDLINE', null, null, 'EUR'],
    ]);
    await insertPositions(ws.db, 2, [
      ['2024-03-04', 'acct-growth', 'EQ-NORDWIND', 1],
      ['2024-03-04', 'acct-growth', 'EQ-FJORDLINE', 1],
      ['2024-03-04', 'acct-growth', 'EQ-SALTMARSH', 1],
    ]);
    await insertPrices(ws.db, 3, [
      ['2024-03-04', 'EQ-NORDWIND', 20, null],
      ['2024-03-04', 'EQ-FJORDLINE', 30, 'GBP'],
      ['2024-03-04', 'EQ-SALTMARSH', 10, null],
    ]);
    expect(await ws.db.all('select security_id, currency from align_prices order by security_id')).toEqual([
      { security_id: 'EQ-FJORDLINE', currency: 'GBP' },
      { security_id: 'EQ-NORDWIND', currency: 'EUR' },
      { security_id: 'EQ-SALTMARSH', currency: 'CHF' },
    ]);
  });
});

describe('align_fx', () => {
  it('carries a rate like a price, nulls it past the limit, and gives the base currency rate 1 on every date', async () => {
    ws = await defaultsWorkspace({ risk: { maxStaleDays: 1 } });
    await insertPositions(ws.db, 1, [['2024-03-04', 'acct-growth', 'EQ-SALTMARSH', 1]]);
    await insertPrices(ws.db, 2, ['04', '05', '06'].map((day) => [`2024-03-${day}`, 'EQ-SALTMARSH', 10, null]));
    await insertFx(ws.db, 3, [
      ['2024-03-04', 'EUR', 1.08],
      ['2024-03-04', 'USD', 0.99], // a rate for the base currency itself is ignored: it is 1
    ]);
    const rows = await ws.db.all('select currency, date, rate, observed_on, stale_days, is_stale from align_fx order by currency, date');
    expect(rows).toEqual([
      { currency: 'EUR', date: '2024-03-04', rate: 1.08, observed_on: '2024-03-04', stale_days: 0, is_stale: false },
      { currency: 'EUR', date: '2024-03-05', rate: 1.08, observed_on: '2024-03-04', stale_days: 1, is_stale: true },
      { currency: 'EUR', date: '2024-03-06', rate: null, observed_on: '2024-03-04', stale_days: 2, is_stale: true },
      { currency: 'USD', date: '2024-03-04', rate: 1, observed_on: '2024-03-04', stale_days: 0, is_stale: false },
      { currency: 'USD', date: '2024-03-05', rate: 1, observed_on: '2024-03-05', stale_days: 0, is_stale: false },
      { currency: 'USD', date: '2024-03-06', rate: 1, observed_on: '2024-03-06', stale_days: 0, is_stale: false },
    ]);
  });
});
