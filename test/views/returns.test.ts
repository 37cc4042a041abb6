import { afterEach, describe, expect, it } from 'vitest';
import { expectRowsClose, insertFx, insertPositions, insertPrices } from '../helpers/rawRows.ts';
import { defaultsWorkspace, type TempWorkspace } from '../helpers/workspace.ts';

let ws: TempWorkspace;
afterEach(() => ws.cleanup());

describe('ret_securities', () => {
  it('gives the base-currency log return of a EUR security from its price and fx moves', async () => {
    ws = await defaultsWorkspace();
    await insertPositions(ws.db, 1, [['2024-03-04', 'acct-growth', 'EQ-NORDWIND', 10]]);
    await insertPrices(ws.db, 2, [
      ['2024-03-04', 'EQ-NORDWIND', 20, 'EUR'],
      ['2024-03-05', 'EQ-NORDWIND', 21, 'EUR'],
    ]);
    await insertFx(ws.db, 3, [
      ['2024-03-04', 'EUR', 1.1],
      ['2024-03-05', 'EUR', 1.12],
    ]);
    const rows = await ws.db.all('select security_id, date, date_index, log_return, log_return_local, simple_return, is_stale from ret_securities');
    // base: ln(21 * 1.12 / (20 * 1.10)) = ln(23.52 / 22); local: ln(21 / 20)
    expectRowsClose(rows, [
      {
        security_id: 'EQ-NORDWIND',
        date: '2024-03-05',
        date_index: 2,
        log_return: Math.log(23.52 / 22),
        log_return_local: Math.log(21 / 20),
        simple_return: 23.52 / 22 - 1,
        is_stale: false,
      },
    ]);
  });

  it('has no return where either price is missing, and no rows for base-currency cash', async () => {
    ws = await defaultsWorkspace({ risk: { maxStaleDays: 0 } });
    await insertPositions(ws.db, 1, [
      ['2024-03-04', 'acct-growth', 'EQ-NORDWIND', 10],
      ['2024-03-04', 'acct-growth', 'EQ-SALTMARSH', 10],
      ['2024-03-04', 'acct-growth', 'CASH:USD', 10],
    ]);
    // EQ-NORDWIND has no price on Tuesday and, with max_stale_days 0, none is carried
    await insertPrices(ws.db, 2, [
      ['2024-03-04', 'EQ-NORDWIND', 20, null],
      ['2024-03-06', 'EQ-NORDWIND', 22, null],
      ...['04', '05', '06'].map((day) => [`2024-03-${day}`, 'EQ-SALTMARSH', 10, null]),
    ]);
    const rows = await ws.db.all("select date, log_return from ret_securities where security_id = 'EQ-NORDWIND' order by date");
    expect(rows).toEqual([
      { date: '2024-03-05', log_return: null },
      { date: '2024-03-06', log_return: null },
    ]);
    expect(await ws.db.all("select count(*)::integer as n from ret_securities where security_id like 'CASH:%'")).toEqual([{ n: 0 }]);
  });
});

describe('ret_portfolios', () => {
  it('comes from the holdings, so a cash deposit moves the value but not the return', async () => {
    ws = await defaultsWorkspace();
    await insertPositions(ws.db, 1, [
      ['2024-03-04', 'acct-growth', 'EQ-SALTMARSH', 100],
      ['2024-03-04', 'acct-growth', 'CASH:USD', 1000],
    ]);
    // a deposit of 1000 arrives on Tuesday
    await insertPositions(ws.db, 2, [
      ['2024-03-05', 'acct-growth', 'EQ-SALTMARSH', 100],
      ['2024-03-05', 'acct-growth', 'CASH:USD', 2000],
    ]);
    await insertPrices(ws.db, 3, [
      ['2024-03-04', 'EQ-SALTMARSH', 10, null],
      ['2024-03-05', 'EQ-SALTMARSH', 11, null],
      ['2024-03-06', 'EQ-SALTMARSH', 12.1, null],
    ]);
    // value: Mon 100 * 10 + 1000 = 2000; Tue 100 * 11 + 2000 = 3100 (+55%, mostly the deposit)
    const values = await ws.db.all<{ value_base: number }>('select value_base from value_portfolios order by date');
    expect(values.map((v) => v.value_base)).toEqual([2000, 3100, 3210]);
    const rows = await ws.db.all('select date, simple_return, log_return, covered_weight, n_uncovered from ret_portfolios order by date');
    // Tue: weights at Monday's close 1000/2000 = 0.5 each; R = 0.5 * (11/10 - 1) + 0.5 * 0 = 0.05
    // Wed: weights at Tuesday's close 1100/3100 and 2000/3100; R = 1100/3100 * (12.1/11 - 1) = 110/3100
    expectRowsClose(rows, [
      { date: '2024-03-05', simple_return: 0.05, log_return: Math.log(1.05), covered_weight: 1, n_uncovered: 0 },
      { date: '2024-03-06', simple_return: 110 / 3100, log_return: Math.log(1 + 110 / 3100), covered_weight: 1, n_uncovered: 0 },
    ]);
  });

  it('is null when a position held at t-1 has no return, keeping covered_weight for diagnosis', async () => {
    ws = await defaultsWorkspace({ risk: { maxStaleDays: 0 } });
    await insertPositions(ws.db, 1, [
      ['2024-03-04', 'acct-growth', 'EQ-NORDWIND', 10],
      ['2024-03-04', 'acct-growth', 'EQ-SALTMARSH', 30],
      ['2024-03-04', 'acct-growth', 'CASH:USD', 500],
    ]);
    await insertPrices(ws.db, 2, [
      ['2024-03-04', 'EQ-NORDWIND', 20, null],
      ['2024-03-04', 'EQ-SALTMARSH', 10, null],
      ['2024-03-05', 'EQ-SALTMARSH', 10.5, null],
    ]);
    // Monday: 200 + 300 + 500 = 1000; EQ-NORDWIND (weight 0.2) has no Tuesday price:
    // covered = 0.3 (EQ-SALTMARSH) + 0.5 (cash) = 0.8
    const rows = await ws.db.all('select date, simple_return, log_return, covered_weight, n_uncovered, n_positions_before from ret_portfolios');
    expectRowsClose(rows, [
      { date: '2024-03-05', simple_return: null, log_return: null, covered_weight: 0.8, n_uncovered: 1, n_positions_before: 3 },
    ]);
  });

  it('has no row on a portfolio\'s first date, and converts foreign holdings at both dates\' rates', async () => {
    ws = await defaultsWorkspace();
    await insertPositions(ws.db, 1, [['2024-03-04', 'acct-growth', 'EQ-SALTMARSH', 10]]);
    // acct-euro starts on Tuesday with a EUR share and EUR cash
    await insertPositions(ws.db, 2, [
      ['2024-03-05', 'acct-euro', 'EQ-NORDWIND', 10],
      ['2024-03-05', 'acct-euro', 'CASH:EUR', 200],
    ]);
    await insertPrices(ws.db, 3, [
      ...['04', '05', '06'].map((day) => [`2024-03-${day}`, 'EQ-SALTMARSH', 10, null]),
      ['2024-03-05', 'EQ-NORDWIND', 20, 'EUR'],
      ['2024-03-06', 'EQ-NORDWIND', 21, 'EUR'],
    ]);
    await insertFx(ws.db, 4, [
      ['2024-03-05', 'EUR', 1.1],
      ['2024-03-06', 'EUR', 1.12],
    ]);
    const rows = await ws.db.all("select date, simple_return from ret_portfolios where portfolio_id = 'acct-euro'");
    // Tuesday: 10 * 20 * 1.1 = 220 and 200 * 1.1 = 220, weights 0.5 each;
    // R = 0.5 * (21 * 1.12 / (20 * 1.1) - 1) + 0.5 * (1.12 / 1.1 - 1): EUR cash earns the
    // EUR/USD move in base terms (SPEC §3, round 2)
    expectRowsClose(rows, [{ date: '2024-03-06', simple_return: 0.5 * (23.52 / 22 - 1) + 0.5 * (1.12 / 1.1 - 1) }]);
    const cash = await ws.db.all("select date, log_return, log_return_local from ret_securities where security_id = 'CASH:EUR'");
    // ln(1.12 / 1.1), zero in its own currency
    expectRowsClose(cash, [{ date: '2024-03-06', log_return: Math.log(1.12 / 1.1), log_return_local: 0 }]);
  });
});
