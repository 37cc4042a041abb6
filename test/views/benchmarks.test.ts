import { afterEach, describe, expect, it } from 'vitest';
import { expectRowsClose, insertBenchmarks, insertFx, insertPositions, insertPrices } from '../helpers/rawRows.ts';
import { defaultsWorkspace, type TempWorkspace } from '../helpers/workspace.ts';

let ws: TempWorkspace;
afterEach(() => ws.cleanup());

// Three valuation dates (made by the held EQ-ALDER); the benchmark also holds EQ-BIRCH, held by no one.
async function market(): Promise<void> {
  await insertPositions(ws.db, 1, [['2024-05-06', 'acct-one', 'EQ-ALDER', 10]]);
  await insertPrices(ws.db, 2, [
    ['2024-05-06', 'EQ-ALDER', 100, null],
    ['2024-05-07', 'EQ-ALDER', 110, null],
    ['2024-05-08', 'EQ-ALDER', 99, null],
    ['2024-05-06', 'EQ-BIRCH', 50, null],
    ['2024-05-07', 'EQ-BIRCH', 49, null],
    ['2024-05-08', 'EQ-BIRCH', 49.49, null],
  ]);
}

describe('hold_benchmark_weights', () => {
  it('carries a snapshot until the next one, and a later file for the same date replaces the whole snapshot', async () => {
    ws = await defaultsWorkspace();
    await market();
    await insertBenchmarks(ws.db, 3, [
      ['2024-05-06', 'bm-two', 'EQ-ALDER', 0.5],
      ['2024-05-06', 'bm-two', 'EQ-BIRCH', 0.5],
      ['2024-05-08', 'bm-two', 'EQ-ALDER', 0.9],
      ['2024-05-08', 'bm-two', 'CASH:USD', 0.1],
    ]);
    // a correction of 2024-05-06 that no longer lists EQ-BIRCH's 0.5 but 0.6 / 0.4
    await insertBenchmarks(ws.db, 4, [
      ['2024-05-06', 'bm-two', 'EQ-ALDER', 0.6],
      ['2024-05-06', 'bm-two', 'EQ-BIRCH', 0.4],
    ]);
    const rows = await ws.db.all('select date::varchar as date, security_id, weight, snapshot_date::varchar as snapshot_date from hold_benchmark_weights order by date, security_id');
    expect(rows).toEqual([
      { date: '2024-05-06', security_id: 'EQ-ALDER', weight: 0.6, snapshot_date: '2024-05-06' },
      { date: '2024-05-06', security_id: 'EQ-BIRCH', weight: 0.4, snapshot_date: '2024-05-06' },
      { date: '2024-05-07', security_id: 'EQ-ALDER', weight: 0.6, snapshot_date: '2024-05-06' },
      { date: '2024-05-07', security_id: 'EQ-BIRCH', weight: 0.4, snapshot_date: '2024-05-06' },
      { date: '2024-05-08', security_id: 'CASH:USD', weight: 0.1, snapshot_date: '2024-05-08' },
      { date: '2024-05-08', security_id: 'EQ-ALDER', weight: 0.9, snapshot_date: '2024-05-08' },
    ]);
  });
});

describe('ret_benchmarks', () => {
  it('is the return of the weights in force the day before, with constituents no one holds priced too (hand-worked; common practice, no source)', async () => {
    ws = await defaultsWorkspace();
    await market();
    await insertBenchmarks(ws.db, 3, [
      ['2024-05-06', 'bm-two', 'EQ-ALDER', 0.6],
      ['2024-05-06', 'bm-two', 'EQ-BIRCH', 0.4],
      ['2024-05-07', 'bm-two', 'EQ-BIRCH', 0.75],
      ['2024-05-07', 'bm-two', 'CASH:USD', 0.25],
    ]);
    const rows = await ws.db.all('select date::varchar as date, simple_return, log_return, n_uncovered from ret_benchmarks order by date');
    // 05-07: 0.6 x (110/100 - 1) + 0.4 x (49/50 - 1) = 0.06 - 0.008 = 0.052
    // 05-08: 0.75 x (49.49/49 - 1) + 0.25 x 0 = 0.75 x 0.01 = 0.0075
    expectRowsClose(rows, [
      { date: '2024-05-07', simple_return: 0.052, log_return: Math.log(1.052), n_uncovered: 0 },
      { date: '2024-05-08', simple_return: 0.0075, log_return: Math.log(1.0075), n_uncovered: 0 },
    ]);
  });

  it('gives base-currency cash 0 and euro cash its fx return, as ret_portfolios does (hand-worked; common practice, no source)', async () => {
    ws = await defaultsWorkspace();
    await market();
    await insertFx(ws.db, 4, [
      ['2024-05-06', 'EUR', 1.1],
      ['2024-05-07', 'EUR', 1.122],
      ['2024-05-08', 'EUR', 1.122],
    ]);
    await insertBenchmarks(ws.db, 3, [
      ['2024-05-06', 'bm-cash', 'EQ-ALDER', 0.5],
      ['2024-05-06', 'bm-cash', 'CASH:USD', 0.25],
      ['2024-05-06', 'bm-cash', 'CASH:EUR', 0.25],
    ]);
    const rows = await ws.db.all('select date::varchar as date, simple_return from ret_benchmarks order by date');
    // 05-07: 0.5 x 0.1 + 0.25 x 0 + 0.25 x (1.122/1.1 - 1) = 0.05 + 0.005 = 0.055; 05-08: 0.5 x (99/110 - 1) = -0.05
    expectRowsClose(rows, [
      { date: '2024-05-07', simple_return: 0.055 },
      { date: '2024-05-08', simple_return: -0.05 },
    ]);
  });

  it('is null when a constituent has no price, never read as a zero return', async () => {
    ws = await defaultsWorkspace();
    await market();
    await insertBenchmarks(ws.db, 3, [
      ['2024-05-06', 'bm-gap', 'EQ-ALDER', 0.5],
      ['2024-05-06', 'bm-gap', 'EQ-UNPRICED', 0.5],
    ]);
    const rows = await ws.db.all('select date::varchar as date, simple_return, log_return, n_uncovered from ret_benchmarks order by date');
    expect(rows).toEqual([
      { date: '2024-05-07', simple_return: null, log_return: null, n_uncovered: 1 },
      { date: '2024-05-08', simple_return: null, log_return: null, n_uncovered: 1 },
    ]);
  });
});
