import { afterEach, describe, expect, it } from 'vitest';
import { expectRowsClose, insertFx, insertPositions, insertPrices } from '../helpers/rawRows.ts';
import { defaultsWorkspace, type TempWorkspace } from '../helpers/workspace.ts';

let ws: TempWorkspace;
afterEach(() => ws.cleanup());

// One date, base USD: a EUR share, EUR cash, a USD share and USD cash.
async function mixedCurrencyPortfolio(extra: (string | number | null)[][] = []): Promise<void> {
  await insertPositions(ws.db, 1, [
    ['2024-03-04', 'acct-growth', 'EQ-NORDWIND', 10],
    ['2024-03-04', 'acct-growth', 'CASH:EUR', 100],
    ['2024-03-04', 'acct-growth', 'EQ-SALTMARSH', 100],
    ['2024-03-04', 'acct-growth', 'CASH:USD', 70],
    ...extra,
  ]);
  await insertPrices(ws.db, 2, [
    ['2024-03-04', 'EQ-NORDWIND', 20, 'EUR'],
    ['2024-03-04', 'EQ-SALTMARSH', 10, null],
  ]);
  await insertFx(ws.db, 3, [['2024-03-04', 'EUR', 1.1]]);
}

describe('value_positions', () => {
  it('converts a EUR price with the fx rate and values cash at 1 in its currency', async () => {
    ws = await defaultsWorkspace();
    await mixedCurrencyPortfolio();
    const rows = await ws.db.all(
      'select security_id, currency, is_cash, price_local, fx_rate, price_base, value_base, price_status from value_positions order by security_id',
    );
    // EQ-NORDWIND: 20 EUR * 1.1 = 22 USD, * 10 = 220; CASH:EUR: 100 * 1 * 1.1 = 110
    expectRowsClose(rows, [
      { security_id: 'CASH:EUR', currency: 'EUR', is_cash: true, price_local: 1, fx_rate: 1.1, price_base: 1.1, value_base: 110, price_status: 'ok' },
      { security_id: 'CASH:USD', currency: 'USD', is_cash: true, price_local: 1, fx_rate: 1, price_base: 1, value_base: 70, price_status: 'ok' },
      { security_id: 'EQ-NORDWIND', currency: 'EUR', is_cash: false, price_local: 20, fx_rate: 1.1, price_base: 22, value_base: 220, price_status: 'ok' },
      { security_id: 'EQ-SALTMARSH', currency: 'USD', is_cash: false, price_local: 10, fx_rate: 1, price_base: 10, value_base: 1000, price_status: 'ok' },
    ]);
  });

  it('leaves the value null with status missing_fx when a currency has no rate, and missing_price without a price', async () => {
    ws = await defaultsWorkspace();
    await mixedCurrencyPortfolio([
      ['2024-03-04', 'acct-growth', 'CASH:GBP', 50],
      ['2024-03-04', 'acct-growth', 'BD-KESTREL-28', 3],
    ]);
    const rows = await ws.db.all(
      "select security_id, price_local, fx_rate, value_base, price_status from value_positions where security_id in ('CASH:GBP', 'BD-KESTREL-28') order by security_id",
    );
    expect(rows).toEqual([
      { security_id: 'BD-KESTREL-28', price_local: null, fx_rate: 1, value_base: null, price_status: 'missing_price' },
      { security_id: 'CASH:GBP', price_local: 1, fx_rate: null, value_base: null, price_status: 'missing_fx' },
    ]);
    // with two positions unvalued the portfolio value is unknown, not understated
    expectRowsClose(await ws.db.all('select value_base, value_base_priced, n_positions, n_unpriced from value_portfolios'), [
      { value_base: null, value_base_priced: 1400, n_positions: 6, n_unpriced: 2 },
    ]);
    const weights = await ws.db.all<{ weight: number | null }>('select weight from value_weights');
    expect(weights.every((w) => w.weight === null)).toBe(true);
  });
});

describe('value_portfolios and value_weights', () => {
  it('include cash in the value, so the weights sum to 1', async () => {
    ws = await defaultsWorkspace();
    await mixedCurrencyPortfolio();
    // 220 + 110 + 1000 + 70 = 1400
    const [portfolio] = await ws.db.all<{ value_base: number; n_positions: number; n_unpriced: number }>(
      'select value_base, n_positions, n_unpriced from value_portfolios',
    );
    expect(portfolio.value_base).toBeCloseTo(1400, 10);
    expect(portfolio).toMatchObject({ n_positions: 4, n_unpriced: 0 });

    const weights = await ws.db.all<{ security_id: string; is_cash: boolean; weight: number }>(
      'select security_id, is_cash, weight from value_weights order by security_id',
    );
    const expected = { 'CASH:EUR': 110 / 1400, 'CASH:USD': 70 / 1400, 'EQ-NORDWIND': 220 / 1400, 'EQ-SALTMARSH': 1000 / 1400 };
    expect(weights.map((w) => w.security_id)).toEqual(Object.keys(expected));
    for (const w of weights) expect(w.weight).toBeCloseTo(expected[w.security_id as keyof typeof expected], 14);
    expect(weights.filter((w) => w.is_cash).map((w) => w.security_id)).toEqual(['CASH:EUR', 'CASH:USD']);
    expect(weights.reduce((sum, w) => sum + w.weight, 0)).toBeCloseTo(1, 14);
  });

  it('give no weights when the portfolio value is zero', async () => {
    ws = await defaultsWorkspace();
    // a long and an equal short cancel out
    await insertPositions(ws.db, 1, [
      ['2024-03-04', 'acct-hedge', 'EQ-SALTMARSH', 100],
      ['2024-03-04', 'acct-hedge', 'EQ-NORDWIND', -50],
    ]);
    await insertPrices(ws.db, 2, [
      ['2024-03-04', 'EQ-SALTMARSH', 10, null],
      ['2024-03-04', 'EQ-NORDWIND', 20, null],
    ]);
    expect(await ws.db.all('select value_base from value_portfolios')).toEqual([{ value_base: 0 }]);
    expect(await ws.db.all('select security_id, weight from value_weights order by security_id')).toEqual([
      { security_id: 'EQ-NORDWIND', weight: null },
      { security_id: 'EQ-SALTMARSH', weight: null },
    ]);
  });
});
