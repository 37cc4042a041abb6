import { afterEach, describe, expect, it } from 'vitest';
import { randomDeliveries } from './randomScenario.ts';
import { insertBenchmarks, insertDeliveries } from '../helpers/rawRows.ts';
import { defaultsWorkspace, type TempWorkspace } from '../helpers/workspace.ts';
import { refreshDerived } from '../../src/storage/derived.ts';

let ws: TempWorkspace;
afterEach(() => ws.cleanup());

type Row = Record<string, unknown>;

/** Same rows in the same order; doubles within 1e-12 relative (a window's sum may add in another order), the rest equal. */
function expectSameRows(actual: Row[], expected: Row[], what: string): void {
  expect(actual.length, `${what}: rows`).toBe(expected.length);
  expected.forEach((want, i) => {
    for (const [column, value] of Object.entries(want)) {
      const got = actual[i][column];
      if (typeof value === 'number' && typeof got === 'number') {
        expect(Math.abs(got - value), `${what} row ${i} ${column}: ${got} vs ${value}`).toBeLessThanOrEqual(1e-12 * Math.max(1, Math.abs(value)));
      } else {
        expect(got, `${what} row ${i} ${column}`).toEqual(value);
      }
    }
  });
}

// The <view>_since(first_date_index) macros let a run read a few dates without the view
// evaluating the whole history. Their rows must be the view's rows from that date on,
// exactly: the risk stage reads the macros, users and the checks read the views.
const BOUNDED: Record<string, string> = {
  hold_daily_positions: 'portfolio_id, security_id, date_index',
  value_positions: 'portfolio_id, security_id, date_index',
  value_weights: 'portfolio_id, security_id, date_index',
  ret_securities: 'security_id, date_index',
  ret_portfolios: 'portfolio_id, date_index',
  hold_benchmark_weights: 'benchmark_id, security_id, date_index',
  ret_benchmarks: 'benchmark_id, date_index',
};

/** Two benchmarks over the scenario's securities: snapshots replaced mid-history, one corrected by a later file, cash in one. */
async function insertBenchmarkSnapshots(dates: number): Promise<void> {
  const held = await ws.db.all<{ security_id: string }>(
    `select security_id from derived_held_securities where not is_cash(security_id) order by security_id limit 3`,
  );
  const days = await ws.db.all<{ date: string }>('select date::varchar as date from align_valuation_dates order by date_index');
  const [a, b, c] = held.map((h) => h.security_id);
  const on = (k: number) => days[Math.min(k, dates - 1)].date;
  await insertBenchmarks(ws.db, 900001, [
    [on(0), 'bm-one', a, 0.5],
    [on(0), 'bm-one', b, 0.5],
    [on(Math.floor(dates / 3)), 'bm-one', c, 0.7],
    [on(Math.floor(dates / 3)), 'bm-one', 'CASH:USD', 0.3],
    [on(2), 'bm-two', b, 1],
    [on(Math.floor((2 * dates) / 3)), 'bm-two', a, 0.4],
    [on(Math.floor((2 * dates) / 3)), 'bm-two', c, 0.6],
  ]);
  // a later file replaces bm-one's middle snapshot whole
  await insertBenchmarks(ws.db, 900002, [[on(Math.floor(dates / 3)), 'bm-one', a, 1]]);
}

describe('the views bounded by date (<view>_since)', () => {
  it('give the view rows from that valuation date on, and nothing before (random scenario with corrections, stale and missing prices)', async () => {
    ws = await defaultsWorkspace({ baseCurrency: 'USD', risk: { maxStaleDays: 2, windows: [5] } });
    await insertDeliveries(ws.db, randomDeliveries(2024));
    await refreshDerived(ws.db);
    const [{ dates }] = await ws.db.all<{ dates: number }>('select count(*)::integer as dates from align_valuation_dates');
    expect(dates).toBeGreaterThan(15);
    await insertBenchmarkSnapshots(dates);
    for (const [view, keys] of Object.entries(BOUNDED)) {
      for (const first of [1, 2, Math.floor(dates / 2), dates, dates + 1]) {
        // ordered by the keys (no double among them), so the same row is at the same place
        const rows = (from: string) => ws.db.all<Row>(`select * from ${from} order by ${keys}`);
        const bounded = await rows(`${view}_since(${first})`);
        const filtered = await rows(`(select * from ${view} where date_index >= ${first})`);
        expectSameRows(bounded, filtered, `${view}_since(${first})`);
        if (first === Math.floor(dates / 2)) expect(bounded.length, view).toBeGreaterThan(0);
      }
    }
  });
});
