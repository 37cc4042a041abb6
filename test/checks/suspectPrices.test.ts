import { describe, expect, it } from 'vitest';
import { findSuspectPrices, marketMoves, type PricePoint, type SuspectPriceRules } from '../../src/checks/suspectPrices.ts';
import { SP500_CLOSES, SP500_DATES } from '../risk/math/data/sp500Closes2008.ts';

/** The defaults of config checks.suspectPrices (README says why). */
const RULES: SuspectPriceRules = { sigmaMultiple: 8, minLogMove: 0.25, lambda: 0.94, seedReturns: 20, powerOfTenTolerance: 0.02, unchangedDates: 10 };

/**
 * S&P 500 daily closes of 2008 (vega-datasets 3.2.1, data/sp500-2000.csv; see the data
 * file): a real and unusually violent year, with daily moves up to +11.6% (2008-10-13)
 * and -9.0% (2008-10-15).
 */
function sp500(edit: (closes: number[]) => void = () => undefined): PricePoint[] {
  const closes = [...SP500_CLOSES];
  edit(closes);
  return SP500_DATES.map((date, i) => ({ date, price: closes[i], confirmed: false, marketMoved: true }));
}
const at = (date: string) => SP500_DATES.indexOf(date);

describe('findSuspectPrices', () => {
  it('raises nothing on the ordinary days of 2008, the crash of October included', () => {
    expect(findSuspectPrices(sp500(), RULES)).toEqual([]);
  });

  it('flags an injected 10x price as a jump and a power of ten, and only that day', () => {
    const day = at('2008-10-14');
    const flags = findSuspectPrices(sp500((c) => (c[day] *= 10)), RULES);
    expect(flags.map((f) => [f.date, f.rules])).toEqual([['2008-10-14', ['jump', 'power_of_ten']]]);
    expect(flags[0].reason).toBe('log move 2.297 from 1003.35 on 2008-10-13, 51.1 times its EWMA daily sigma of 4.50%; a factor of 9.94678, close to 10: a unit or decimal-separator slip?');
  });

  it('flags a decimal-separator slip (1.066,10 read for 66,10: a 16x jump), which is no power of ten', () => {
    const day = at('2008-06-02');
    const flags = findSuspectPrices(sp500((c) => (c[day] *= 1066.1 / 66.1)), RULES);
    expect(flags.map((f) => [f.date, f.rules])).toEqual([['2008-06-02', ['jump']]]);
  });

  it('flags a price that stays still for 10 valuation dates while the market moves, not before', () => {
    const from = at('2008-03-03');
    const points = sp500((c) => c.fill(c[from], from + 1, from + 12));
    const flags = findSuspectPrices(points, RULES);
    expect(flags.map((f) => f.date)).toEqual(SP500_DATES.slice(from + 10, from + 12));
    expect(flags[0].rules).toEqual(['unchanged']);
    // the same stillness on dates when the market did not move either is no sign of a stale feed
    const quiet = points.map((p) => ({ ...p, marketMoved: false }));
    expect(findSuspectPrices(quiet, RULES)).toEqual([]);
  });

  it('takes a new level that the next price holds as real, and never flags a confirmed price', () => {
    const day = at('2008-09-02');
    const shifted = sp500((c) => c.forEach((_, i) => i >= day && (c[i] *= 3)));
    expect(findSuspectPrices(shifted, RULES).map((f) => f.date)).toEqual(['2008-09-02']);
    const confirmed = shifted.map((p, i) => (i === day ? { ...p, confirmed: true } : p));
    expect(findSuspectPrices(confirmed, RULES)).toEqual([]);
  });

  it('refuses a non-positive price and dates out of order, and does not mutate its input', () => {
    const points = sp500();
    const copy = structuredClone(points);
    findSuspectPrices(points, RULES);
    expect(points).toEqual(copy);
    expect(() => findSuspectPrices([{ ...points[0], price: 0 }], RULES)).toThrow(/positive number/);
    expect(() => findSuspectPrices([points[1], points[0]], RULES)).toThrow(/dates must ascend/);
  });
});

describe('marketMoves', () => {
  it('counts per currency and date the securities whose price changed', () => {
    const moves = marketMoves([
      { currency: 'USD', dates: ['d1', 'd2', 'd3'], prices: [1, 2, 2] },
      { currency: 'USD', dates: ['d1', 'd2', 'd3'], prices: [5, 6, 7] },
      { currency: 'EUR', dates: ['d1', 'd2'], prices: [1, 1] },
    ]);
    expect([...moves.get('USD')!]).toEqual([['d2', 2], ['d3', 1]]);
    expect(moves.get('EUR')!.size).toBe(0);
  });
});
