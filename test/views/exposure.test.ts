import { afterEach, describe, expect, it } from 'vitest';
import { expectRowsClose, insertFx, insertPositions, insertPrices, insertSecurities } from '../helpers/rawRows.ts';
import { defaultsWorkspace, type TempWorkspace } from '../helpers/workspace.ts';

let ws: TempWorkspace;
afterEach(() => ws.cleanup());

// One date, base USD. Values: EQ-NORDWIND 10 x 20 EUR x 1.1 = 220, EQ-SALTMARSH 100 x 10 = 1000,
// BD-KESTREL-28 4 x 25 = 100, CASH:EUR 100 x 1.1 = 110, CASH:USD 70; total 1500.
async function mixedBook(): Promise<void> {
  await insertSecurities(ws.db, 1, [
    ['EQ-NORDWIND', 'Nordwind', 'equity', 'EUR'],
    ['EQ-SALTMARSH', 'Saltmarsh', 'equity', 'USD'],
    // delivered without an asset class: counted, as unclassified
    ['BD-KESTREL-28', 'Kestrel 2028', ' ', 'USD'],
  ]);
  await insertPositions(ws.db, 2, [
    ['2024-03-04', 'acct-growth', 'EQ-NORDWIND', 10],
    ['2024-03-04', 'acct-growth', 'EQ-SALTMARSH', 100],
    ['2024-03-04', 'acct-growth', 'BD-KESTREL-28', 4],
    ['2024-03-04', 'acct-growth', 'CASH:EUR', 100],
    ['2024-03-04', 'acct-growth', 'CASH:USD', 70],
  ]);
  await insertPrices(ws.db, 3, [
    ['2024-03-04', 'EQ-NORDWIND', 20, 'EUR'],
    ['2024-03-04', 'EQ-SALTMARSH', 10, null],
    ['2024-03-04', 'BD-KESTREL-28', 25, null],
  ]);
  await insertFx(ws.db, 4, [['2024-03-04', 'EUR', 1.1]]);
}

describe('exposure_daily', () => {
  it('sums values and weights by asset class and by currency (hand-worked; common practice, no source)', async () => {
    ws = await defaultsWorkspace();
    await mixedBook();
    const rows = await ws.db.all(
      'select portfolio_id, dimension, bucket, value_base, weight, n_positions from exposure_daily order by dimension, bucket',
    );
    expectRowsClose(rows, [
      { portfolio_id: 'acct-growth', dimension: 'asset_class', bucket: 'cash', value_base: 180, weight: 180 / 1500, n_positions: 2 },
      { portfolio_id: 'acct-growth', dimension: 'asset_class', bucket: 'equity', value_base: 1220, weight: 1220 / 1500, n_positions: 2 },
      { portfolio_id: 'acct-growth', dimension: 'asset_class', bucket: 'unclassified', value_base: 100, weight: 100 / 1500, n_positions: 1 },
      { portfolio_id: 'acct-growth', dimension: 'currency', bucket: 'EUR', value_base: 330, weight: 330 / 1500, n_positions: 2 },
      { portfolio_id: 'acct-growth', dimension: 'currency', bucket: 'USD', value_base: 1170, weight: 1170 / 1500, n_positions: 3 },
    ]);
    const sums = await ws.db.all<{ dimension: string; total: number }>(
      'select dimension, sum(weight) as total from exposure_daily group by dimension order by dimension',
    );
    for (const s of sums) expect(s.total, s.dimension).toBeCloseTo(1, 14);
  });

  it('shows a security missing from the reference data as unclassified, and a bucket with an unvalued position as null', async () => {
    ws = await defaultsWorkspace();
    await mixedBook();
    // a new snapshot adds a security nobody described and that has no price
    await insertPositions(ws.db, 5, [
      ['2024-03-04', 'acct-growth', 'EQ-SALTMARSH', 100],
      ['2024-03-04', 'acct-growth', 'EQ-UNLISTED', 5],
    ]);
    const rows = await ws.db.all(
      "select dimension, bucket, value_base, weight, n_positions from exposure_daily order by dimension, bucket",
    );
    expect(rows).toEqual([
      { dimension: 'asset_class', bucket: 'equity', value_base: 1000, weight: null, n_positions: 1 },
      { dimension: 'asset_class', bucket: 'unclassified', value_base: null, weight: null, n_positions: 1 },
      { dimension: 'currency', bucket: 'USD', value_base: null, weight: null, n_positions: 2 },
    ]);
  });
});

describe('exposure_concentration', () => {
  it('inverts the HHI of the U.S. merger guidelines example: shares 30, 30, 20, 20 give HHI 2,600 (U.S. DOJ/FTC Horizontal Merger Guidelines; from memory)', async () => {
    ws = await defaultsWorkspace();
    await insertPositions(ws.db, 1, [
      ['2024-03-04', 'acct-hhi', 'EQ-A', 30],
      ['2024-03-04', 'acct-hhi', 'EQ-B', 30],
      ['2024-03-04', 'acct-hhi', 'EQ-C', 20],
      ['2024-03-04', 'acct-hhi', 'CASH:USD', 20],
    ]);
    await insertPrices(ws.db, 2, ['EQ-A', 'EQ-B', 'EQ-C'].map((s) => ['2024-03-04', s, 1, null]));
    const [row] = await ws.db.all<{ largest_10_weight: number; effective_holdings: number; n_positions: number }>(
      'select largest_10_weight, effective_holdings, n_positions from exposure_concentration',
    );
    expect(10_000 / row.effective_holdings).toBeCloseTo(2600, 9);
    expect(row.largest_10_weight).toBeCloseTo(1, 14);
    expect(row.n_positions).toBe(4);
  });

  it('adds up the 10 largest weights, a short by its size (common practice, no source; hand example)', async () => {
    ws = await defaultsWorkspace();
    // 13 holdings worth 200, 150, 100 x 5, 50 x 2, 12.5 x 4 of 1000: the largest ten are
    // 0.2 + 0.15 + 0.5 + 0.1 + 0.0125 = 0.9625; sum w^2 = 0.04 + 0.0225 + 0.05 + 0.005 + 0.000625
    const values = [200, 150, 100, 100, 100, 100, 100, 50, 50, 12.5, 12.5, 12.5, 12.5];
    await insertPositions(ws.db, 1, [
      ...values.map((v, i) => ['2024-03-04', 'acct-wide', `EQ-${String(i).padStart(2, '0')}`, v]),
      // a short of 30 against 30 more cash: the book stays at 1000, the short weighs 0.03 by size
      ['2024-03-04', 'acct-short', 'EQ-00', 1000],
      ['2024-03-04', 'acct-short', 'EQ-01', -30],
      ['2024-03-04', 'acct-short', 'CASH:USD', 30],
    ]);
    await insertPrices(ws.db, 2, values.map((_, i) => ['2024-03-04', `EQ-${String(i).padStart(2, '0')}`, 1, null]));
    const rows = await ws.db.all('select portfolio_id, largest_10_weight, effective_holdings from exposure_concentration order by portfolio_id');
    expectRowsClose(rows, [
      { portfolio_id: 'acct-short', largest_10_weight: 1.06, effective_holdings: 1 / (1 + 0.0009 + 0.0009) },
      { portfolio_id: 'acct-wide', largest_10_weight: 0.9625, effective_holdings: 1 / 0.118125 },
    ]);
  });
});
