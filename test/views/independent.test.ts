import { afterEach, describe, expect, it } from 'vitest';
import { randomDeliveries } from './randomScenario.ts';
import { insertDeliveries } from '../helpers/rawRows.ts';
import { referenceViews } from '../helpers/referenceViews.ts';
import { defaultsWorkspace, type TempWorkspace } from '../helpers/workspace.ts';
import { refreshDerived } from '../../src/storage/derived.ts';

let ws: TempWorkspace;
afterEach(() => ws.cleanup());

/** Same keys, and each value equal (null to null) or within 1e-12 relative. */
function expectSameNumbers(actual: Map<string, number | null>, expected: Map<string, number | null>, what: string): void {
  expect([...actual.keys()].sort(), `${what}: keys`).toEqual([...expected.keys()].sort());
  for (const [key, want] of expected) {
    const got = actual.get(key)!;
    if (want === null || got === null) expect(got, `${what} ${key}`).toBe(want);
    else expect(Math.abs(got - want), `${what} ${key}: ${got} vs ${want}`).toBeLessThanOrEqual(1e-12 * Math.max(1, Math.abs(want)));
  }
}

// Source: an independent day-by-day re-implementation of SPEC §3-§4 in plain TypeScript
// (test/helpers/referenceViews.ts), with simple-statistics' sum for portfolio values.
describe('the views against an independent computation from the raw rows', () => {
  for (const seed of [7, 2024, 31337]) {
    it(`agree on valuation dates, values, weights and returns (random scenario, seed ${seed})`, async () => {
      ws = await defaultsWorkspace({ baseCurrency: 'USD', risk: { maxStaleDays: 2, windows: [5] } });
      const raw = randomDeliveries(seed);
      await insertDeliveries(ws.db, raw);
      await refreshDerived(ws.db);
      const want = referenceViews(raw, 'USD', 2);

      const dates = await ws.db.all<{ date: string }>('select date from align_valuation_dates order by date_index');
      expect(dates.map((d) => d.date)).toEqual(want.valuationDates);
      expect(want.valuationDates.length).toBeGreaterThan(15);

      const weights = await ws.db.all<{ k: string; value_base: number | null; weight: number | null }>(
        "select portfolio_id || '|' || date || '|' || security_id as k, value_base, weight from value_weights",
      );
      expectSameNumbers(new Map(weights.map((r) => [r.k, r.value_base])), new Map([...want.weights].map(([k, v]) => [k, v.valueBase])), 'value_base');
      expectSameNumbers(new Map(weights.map((r) => [r.k, r.weight])), new Map([...want.weights].map(([k, v]) => [k, v.weight])), 'weight');

      const values = await ws.db.all<{ k: string; value_base: number | null }>("select portfolio_id || '|' || date as k, value_base from value_portfolios");
      expectSameNumbers(new Map(values.map((r) => [r.k, r.value_base])), want.portfolioValues, 'portfolio value');

      const securityReturns = await ws.db.all<{ k: string; log_return: number | null }>("select security_id || '|' || date as k, log_return from ret_securities");
      expectSameNumbers(new Map(securityReturns.map((r) => [r.k, r.log_return])), want.securityLogReturns, 'security log return');

      const portfolioReturns = await ws.db.all<{ k: string; simple_return: number | null; covered_weight: number | null }>(
        "select portfolio_id || '|' || date as k, simple_return, covered_weight from ret_portfolios",
      );
      expectSameNumbers(new Map(portfolioReturns.map((r) => [r.k, r.simple_return])), new Map([...want.portfolioReturns].map(([k, v]) => [k, v.simpleReturn])), 'portfolio return');
      expectSameNumbers(new Map(portfolioReturns.map((r) => [r.k, r.covered_weight])), new Map([...want.portfolioReturns].map(([k, v]) => [k, v.coveredWeight])), 'covered weight');
      // the scenario must exercise both complete and incomplete portfolio returns
      const simple = [...want.portfolioReturns.values()].map((v) => v.simpleReturn);
      expect(simple.some((v) => v === null)).toBe(true);
      expect(simple.some((v) => v !== null)).toBe(true);
    });
  }
});
