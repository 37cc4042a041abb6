import { afterEach, describe, expect, it } from 'vitest';
import type { Database } from '../../src/storage/database.ts';
import { refreshDerived } from '../../src/storage/derived.ts';
import { insertDeliveryRows, insertRows } from '../helpers/rawRows.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';
import { buildScenario, correctPrice, scenarioDeliveries, type Scenario } from '../risk/stage/scenario.ts';

// A refresh from the earliest delivered date must leave the derived tables exactly as a
// rebuild from the raw tables would: they hold copied prices, rates, dates and counts,
// no arithmetic, so equal means equal (no tolerance).
const TABLES: Record<string, string> = {
  derived_snapshots: 'portfolio_id, snapshot_date',
  derived_held_securities: 'security_id',
  derived_held_out_prices: 'security_id, date',
  derived_valuation_dates: 'date',
  derived_aligned_prices: 'security_id, date',
  derived_aligned_fx: 'currency, date',
};

// The stored position values, weights, security and portfolio returns are arithmetic (products, a window's sum): a
// refresh equals a rebuild to 1e-12 relative on every figure (the project's rule for an
// incremental path, common practice, no source), every other column exactly.
const VALUED: Record<string, string> = {
  derived_position_weights: 'portfolio_id, date, security_id',
  derived_security_returns: 'security_id, date',
  derived_portfolio_returns: 'portfolio_id, date',
};

function expectRelativelyEqual(actual: Record<string, unknown>[], expected: Record<string, unknown>[], table: string): void {
  expect(actual, table).toHaveLength(expected.length);
  expected.forEach((want, i) => {
    for (const [key, value] of Object.entries(want)) {
      const got = actual[i][key];
      if (typeof value === 'number' && typeof got === 'number' && Number.isFinite(value)) {
        expect(Math.abs(got - value), `${table} row ${i} ${key}`).toBeLessThanOrEqual(1e-12 * Math.max(Math.abs(value), 1e-300));
      } else expect(got, `${table} row ${i} ${key}`).toEqual(value);
    }
  });
}

/** The raw rows of days [first, last], without the refresh the shared loader does: the test refreshes itself. */
const loadDays = (db: Database, s: Scenario, first: number, last: number) => insertDeliveryRows(db, scenarioDeliveries(s, first, last));

async function derivedRows(db: Database): Promise<Record<string, unknown[]>> {
  const out: Record<string, unknown[]> = {};
  for (const [table, keys] of Object.entries({ ...TABLES, ...VALUED })) out[table] = await db.all(`select * from ${table} order by ${keys}`);
  return out;
}

/** Refreshes (as the worker would after a delivery), then checks the result against a full rebuild of the same raw rows. */
async function expectRefreshEqualsRebuild(db: Database, mode: 'from' | 'full', from?: string): Promise<void> {
  const refresh = await refreshDerived(db);
  expect(refresh.mode).toBe(mode);
  if (from !== undefined) expect(refresh.from).toBe(from);
  const incremental = await derivedRows(db);
  await db.run('delete from derived_state');
  expect((await refreshDerived(db)).mode).toBe('full');
  const rebuilt = await derivedRows(db);
  for (const table of Object.keys(TABLES)) expect(incremental[table], table).toEqual(rebuilt[table]);
  for (const table of Object.keys(VALUED)) expectRelativelyEqual(incremental[table] as Record<string, unknown>[], rebuilt[table] as Record<string, unknown>[], table);
  expect(rebuilt.derived_aligned_prices.length).toBeGreaterThan(500);
  expect(rebuilt.derived_position_weights.length).toBeGreaterThan(500);
  expect(rebuilt.derived_security_returns.length).toBeGreaterThan(500);
  expect(rebuilt.derived_portfolio_returns.length).toBeGreaterThan(100);
}

/** A later positions file replacing one portfolio's snapshot of that day. */
async function correctSnapshot(db: Database, fileId: number, date: string, portfolio: string, quantities: Record<string, number>): Promise<void> {
  const rows = Object.entries(quantities).map(([security, quantity], i) => [fileId, i + 1, date, portfolio, security, quantity]);
  await insertRows(db, 'positions', ['date', 'portfolio_id', 'security_id', 'quantity'], rows);
}

/** EQ-HALYARD priced from the first day but held by nobody (yet): refreshed, it has no carried prices. */
async function loadWithUnheldNewcomer(db: Database, s: Scenario): Promise<void> {
  await loadDays(db, s, 0, s.dates.length - 1);
  const newcomer = s.dates.map((date, d) => [300000, d + 1, date, 'EQ-HALYARD', 50 + d / 10, 'USD']);
  await insertRows(db, 'prices', ['date', 'security_id', 'price', 'currency'], newcomer);
  await refreshDerived(db);
  expect((await newcomerRows(db)).n).toBe(0);
}

/** How many carried prices EQ-HALYARD has, and from when. */
async function newcomerRows(db: Database): Promise<{ n: number; first: string | null }> {
  const [row] = await db.all<{ n: number; first: string | null }>(
    `select count(*)::integer as n, min(date)::varchar as first from derived_aligned_prices where security_id = 'EQ-HALYARD'`,
  );
  return row;
}

describe('refreshDerived from the earliest delivered date', () => {
  let ws: TempWorkspace | null = null;
  afterEach(() => {
    ws?.cleanup();
    ws = null;
  });

  it('appends new days (prices, fx, a new snapshot) exactly as a rebuild would', async () => {
    ws = await tempWorkspace();
    const s = buildScenario();
    await loadDays(ws.db, s, 0, 140);
    await expectRefreshEqualsRebuild(ws.db, 'from', s.dates[0]);
    // one day, then another, a week at once, then days inside EQ-FERNHOLT's gap of
    // prices (170..176: carried in from before the refresh date)
    for (const [first, last] of [[141, 141], [142, 142], [143, 150], [151, 171], [172, 172]]) {
      await loadDays(ws.db, s, first, last);
      await expectRefreshEqualsRebuild(ws.db, 'from', s.dates[first]);
    }
    // nothing delivered: nothing to do
    expect((await refreshDerived(ws.db)).mode).toBe('current');
  });

  it('redoes from a price corrected in the middle of history, and from an fx rate corrected there', async () => {
    ws = await tempWorkspace();
    const s = buildScenario();
    await loadDays(ws.db, s, 0, s.dates.length - 1);
    await refreshDerived(ws.db);
    await correctPrice(ws.db, s, 'EQ-QUILLON', 99, (s.prices['EQ-QUILLON'][99] as number) * 1.05);
    await expectRefreshEqualsRebuild(ws.db, 'from', s.dates[99]);
    await insertRows(ws.db, 'fx_rates', ['date', 'currency', 'rate'], [[100001, 1, s.dates[80], 'EUR', s.eurUsd[80] * 1.01]]);
    await expectRefreshEqualsRebuild(ws.db, 'from', s.dates[80]);
  });

  it('redoes from a corrected snapshot: a security first held there gets its whole price history, and loses it when a later correction drops it', async () => {
    ws = await tempWorkspace();
    const s = buildScenario();
    await loadWithUnheldNewcomer(ws.db, s);

    const growth90 = { 'EQ-NORDWIND': 1100, 'EQ-SALTMARSH': 1000, 'EQ-QUILLON': 1700, 'CASH:USD': 9000 };
    await correctSnapshot(ws.db, 200001, s.dates[90], 'acct-growth', { ...growth90, 'EQ-HALYARD': 300 });
    await expectRefreshEqualsRebuild(ws.db, 'from', s.dates[90]);
    expect((await newcomerRows(ws.db)).first).toBe(s.dates[0]);

    await correctSnapshot(ws.db, 200002, s.dates[90], 'acct-growth', growth90);
    await expectRefreshEqualsRebuild(ws.db, 'from', s.dates[90]);
    expect((await newcomerRows(ws.db)).n).toBe(0);

    // a delivery taken out again is no append: a full rebuild
    await ws.db.run('delete from positions where file_id = 200002');
    await expectRefreshEqualsRebuild(ws.db, 'full');
    expect((await newcomerRows(ws.db)).first).toBe(s.dates[0]);
  });

  it('redoes from a benchmark snapshot: a constituent nobody holds gets its whole price history, and loses it when a correction drops it', async () => {
    ws = await tempWorkspace();
    const s = buildScenario();
    await loadWithUnheldNewcomer(ws.db, s);
    const columns = ['date', 'benchmark_id', 'security_id', 'weight'];
    await insertRows(ws.db, 'benchmarks', columns, [
      [400001, 1, s.dates[90], 'bm-policy', 'EQ-HALYARD', 0.4],
      [400001, 2, s.dates[90], 'bm-policy', 'EQ-QUILLON', 0.6],
    ]);
    await expectRefreshEqualsRebuild(ws.db, 'from', s.dates[90]);
    expect((await newcomerRows(ws.db)).first).toBe(s.dates[0]);
    await insertRows(ws.db, 'benchmarks', columns, [[400002, 1, s.dates[90], 'bm-policy', 'EQ-QUILLON', 1]]);
    await expectRefreshEqualsRebuild(ws.db, 'from', s.dates[90]);
    expect((await newcomerRows(ws.db)).n).toBe(0);
  });

  it('redoes from a suspect price held out of risk, and again when the hold is lifted or the mode switched', async () => {
    ws = await tempWorkspace();
    const s = buildScenario();
    await loadDays(ws.db, s, 0, s.dates.length - 1);
    await refreshDerived(ws.db);
    const flag = (date: string, held: boolean) =>
      ws!.db.run(`insert into price_checks (security_id, date, price, rules, reason, held) values ('EQ-QUILLON', $1::date, 1, 'jump', 'test', $2)`, [date, held]);
    await flag(s.dates[120], true);
    await expectRefreshEqualsRebuild(ws.db, 'from', s.dates[120]);
    // the held price is skipped: the one before it is carried over its date
    const [carried] = await ws.db.all<{ observed_on: string; stale_days: number }>(
      `select observed_on::varchar as observed_on, stale_days from derived_aligned_prices where security_id = 'EQ-QUILLON' and date = $1::date`,
      [s.dates[120]],
    );
    expect(carried).toEqual({ observed_on: s.dates[119], stale_days: 1 });

    // an earlier flag only reported (mode report): the carried prices stay as they are
    await flag(s.dates[60], false);
    expect((await refreshDerived(ws.db)).mode).toBe('current');
    // switched to hold: both are held, redone from the earlier one
    await ws.db.run('update price_checks set held = true where cleared_at is null');
    await expectRefreshEqualsRebuild(ws.db, 'from', s.dates[60]);
    // the later one cleared (a delivery confirmed it)
    await ws.db.run(`update price_checks set cleared_at = now() where date = $1::date`, [s.dates[120]]);
    await expectRefreshEqualsRebuild(ws.db, 'from', s.dates[120]);
  });

  it('rebuilds the stored values in full when max_stale_days or the base currency changes, from where a security\'s currency changed', async () => {
    ws = await tempWorkspace();
    const s = buildScenario();
    await loadDays(ws.db, s, 0, s.dates.length - 1);
    await refreshDerived(ws.db);
    const unvalued = async () =>
      (await ws!.db.all<{ n: number }>('select count(*)::integer as n from derived_position_weights where weight is null'))[0].n;
    const before = await unvalued();
    // EQ-QUILLON's gap of prices outlasts one valuation date: its portfolios lose their value there
    await ws.db.run('update pipeline_settings set max_stale_days = 1');
    await expectRefreshEqualsRebuild(ws.db, 'full');
    expect(await unvalued()).toBeGreaterThan(before);
    // a security's currency changed: redone from the first date it was held
    const [{ first }] = await ws.db.all<{ first: string }>(
      `select first_held_on::varchar as first from derived_held_securities where security_id = 'EQ-NORDWIND'`,
    );
    await insertRows(ws.db, 'securities', ['security_id', 'name', 'asset_class', 'currency'], [[500001, 1, 'EQ-NORDWIND', 'Nordwind', 'equity', 'EUR']]);
    await expectRefreshEqualsRebuild(ws.db, 'from', first);
    // reference data of a security nobody holds: nothing to redo
    await insertRows(ws.db, 'securities', ['security_id', 'name', 'asset_class', 'currency'], [[500002, 1, 'EQ-NOBODY', 'Nobody', 'equity', 'EUR']]);
    expect((await refreshDerived(ws.db)).mode).toBe('current');
    await ws.db.run(`update pipeline_settings set base_currency = 'EUR'`);
    await expectRefreshEqualsRebuild(ws.db, 'full');
    expect((await refreshDerived(ws.db)).mode).toBe('current');
  });
});
