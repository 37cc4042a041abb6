import { describe, expect, it } from 'vitest';
import { compoundedReturns, hypotheticalReturns, stressPnl, worstWindow, type StressHolding } from '../../../src/risk/math/stress.ts';
import { SP500_CLOSES, SP500_DATES } from './data/sp500Closes2008.ts';

function sp500LogReturns(): Float64Array {
  const r = new Float64Array(SP500_CLOSES.length - 1);
  for (let t = 1; t < SP500_CLOSES.length; t++) r[t - 1] = Math.log(SP500_CLOSES[t] / SP500_CLOSES[t - 1]);
  return r;
}

describe('compoundedReturns', () => {
  it('compounds daily returns into the ratio of the range\'s closes (S&P 500, 2008-09-29 .. 2008-10-10, vega-datasets sp500-2000.csv)', () => {
    const returns = sp500LogReturns();
    const from = SP500_DATES.indexOf('2008-09-29');
    const to = SP500_DATES.indexOf('2008-10-10');
    // returns[t - 1] is the return of date t, so the range's returns are from - 1 .. to - 1
    const range = returns.slice(from - 1, to);
    const [compounded] = compoundedReturns(range, range.length, 1);
    // closes by hand from the file: 2008-09-26 1213.27002, 2008-10-10 899.219971
    expect(SP500_CLOSES[from - 1]).toBe(1213.27002);
    expect(SP500_CLOSES[to]).toBe(899.219971);
    expect(compounded).toBeCloseTo(899.219971 / 1213.27002 - 1, 12);
  });

  it('gives NaN for a security with a missing day, never a return of zero', () => {
    const out = compoundedReturns(Float64Array.of(0.01, Number.NaN, 0.02, 0.03), 2, 2);
    expect(out[0]).toBeCloseTo(Math.exp(0.03) - 1, 15);
    expect(out[1]).toBeNaN();
  });

  it('does not mutate its input', () => {
    const returns = Float64Array.of(0.01, -0.02);
    compoundedReturns(returns, 2, 1);
    worstWindow(returns, 1);
    expect(Array.from(returns)).toEqual([0.01, -0.02]);
  });

  it('throws for an empty range and a shape mismatch', () => {
    expect(() => compoundedReturns(new Float64Array(0), 0, 1)).toThrow(/compoundedReturns: rows must be an integer >= 1, got 0/);
    expect(() => compoundedReturns(new Float64Array(3), 2, 2)).toThrow(/logReturns has length 3, expected 4/);
  });
});

describe('stressPnl', () => {
  it('adds V_i R_i and reports it as a share of value (common practice, no source; hand example)', () => {
    const result = stressPnl(Float64Array.of(600, 300, 100), Float64Array.of(-0.2, 0.1, 0));
    expect(result.pnl[0]).toBeCloseTo(-120 + 30, 10);
    expect(result.pnlPct).toBeCloseTo(-0.09, 12);
    expect(result.coverage).toBe(1);
  });

  it('flags a holding without data and leaves it out', () => {
    const result = stressPnl(Float64Array.of(600, 400), Float64Array.of(-0.1, Number.NaN));
    expect(Array.from(result.missing)).toEqual([1]);
    expect(result.coverage).toBeCloseTo(0.6, 15);
    expect(result.pnl[0]).toBeCloseTo(-60, 10);
  });

  it('takes a -100% move as a total loss, not as missing data', () => {
    const result = stressPnl(Float64Array.of(250, 750), Float64Array.of(-1, 0));
    expect(result.pnl[0]).toBe(-250);
    expect(result.missing.length).toBe(0);
  });

  it('gives pnlPct NaN for a portfolio whose value is not positive', () => {
    expect(stressPnl(Float64Array.of(100, -100), Float64Array.of(-0.1, 0.1)).pnlPct).toBeNaN();
  });

  it('throws for a return below -100% and mismatched lengths', () => {
    expect(() => stressPnl(Float64Array.of(1), Float64Array.of(-1.5))).toThrow(/stressPnl: simpleReturns\[0\] = -1.5 is below -100%/);
    expect(() => stressPnl(Float64Array.of(1), Float64Array.of(0, 0))).toThrow(/simpleReturns has length 2, expected 1/);
  });

  it('does not mutate its inputs', () => {
    const values = Float64Array.of(600, 400);
    const returns = Float64Array.of(-0.1, 0.2);
    stressPnl(values, returns);
    expect(Array.from(values)).toEqual([600, 400]);
    expect(Array.from(returns)).toEqual([-0.1, 0.2]);
  });
});

describe('worstWindow', () => {
  const returns = sp500LogReturns();

  it('finds the worst day of 2008 on 2008-10-15 (S&P 500 closes 998.01001 -> 907.840027)', () => {
    const worst = worstWindow(returns, 1);
    expect(worst).not.toBeNull();
    expect(SP500_DATES[(worst?.start ?? 0) + 1]).toBe('2008-10-15');
    expect(worst?.return).toBeCloseTo(907.840027 / 998.01001 - 1, 12);
  });

  it('gives as the worst 5-day move the ratio of the closes at its ends (a brute-force search over the series)', () => {
    const worst = worstWindow(returns, 5);
    let lowest = Infinity;
    let at = -1;
    for (let t = 0; t + 5 < SP500_CLOSES.length; t++) {
      const move = SP500_CLOSES[t + 5] / SP500_CLOSES[t] - 1;
      if (move < lowest) [lowest, at] = [move, t];
    }
    expect(worst?.start).toBe(at);
    expect(worst?.return).toBeCloseTo(lowest, 12);
  });

  it('skips windows with a missing return and gives null when none is complete', () => {
    const series = Float64Array.of(-0.05, Number.NaN, -0.01, -0.02, 0.01);
    expect(worstWindow(series, 2)).toEqual({ start: 2, return: Math.expm1(-0.03) });
    expect(worstWindow(Float64Array.of(0.01, Number.NaN, 0.01), 2)).toBeNull();
    expect(worstWindow(Float64Array.of(0.01), 5)).toBeNull();
  });

  it('throws for a window of zero days', () => {
    expect(() => worstWindow(returns, 0)).toThrow(/worstWindow: days must be an integer >= 1, got 0/);
  });
});

describe('hypotheticalReturns', () => {
  const holdings: StressHolding[] = [
    { security: 'EQ1', assetClass: 'equity', currency: 'CHF', isCash: false },
    { security: 'EQ2', assetClass: 'equity', currency: 'EUR', isCash: false },
    { security: 'BD1', assetClass: 'bond', currency: 'EUR', isCash: false },
    { security: 'UNK', assetClass: null, currency: 'CHF', isCash: false },
    { security: 'CASH:EUR', assetClass: 'cash', currency: 'EUR', isCash: true },
    { security: 'CASH:CHF', assetClass: 'cash', currency: 'CHF', isCash: true },
  ];

  it('applies the most specific price shock, compounds it with the currency shock and moves foreign cash by its currency only', () => {
    const r = hypotheticalReturns(
      holdings,
      [{ all: true, return: -0.1 }, { assetClass: 'equity', return: -0.3 }, { security: 'EQ2', return: -0.5 }, { currency: 'EUR', return: -0.2 }],
      'CHF',
    );
    expect(r[0]).toBeCloseTo(-0.3, 15); // class shock, base currency
    expect(r[1]).toBeCloseTo(0.5 * 0.8 - 1, 15); // security shock wins, with EUR -20%
    expect(r[2]).toBeCloseTo(0.9 * 0.8 - 1, 15); // all, with EUR -20%
    expect(r[3]).toBeCloseTo(-0.1, 15); // unclassified: all
    expect(r[4]).toBeCloseTo(-0.2, 15); // EUR cash: the currency only
    expect(r[5]).toBe(0); // base cash: nothing moves it
  });

  it('does not mutate its inputs (frozen holdings and shocks)', () => {
    const frozen = Object.freeze(holdings.map((h) => Object.freeze({ ...h })));
    const shocks = Object.freeze([Object.freeze({ all: true as const, return: -0.1 })]);
    expect(hypotheticalReturns(frozen, shocks, 'CHF')[0]).toBeCloseTo(-0.1, 15);
  });

  it('leaves a holding no shock matches unchanged', () => {
    expect(Array.from(hypotheticalReturns(holdings.slice(0, 1), [{ security: 'OTHER', return: -0.4 }], 'CHF'))).toEqual([0]);
  });

  it('throws for a shock on the base currency, a repeated target and a return below -100%', () => {
    expect(() => hypotheticalReturns(holdings, [{ currency: 'CHF', return: 0.1 }], 'CHF')).toThrow(
      /hypotheticalReturns: shocks\[0\] shocks the base currency CHF/,
    );
    expect(() => hypotheticalReturns(holdings, [{ assetClass: 'bond', return: 0.1 }, { assetClass: 'bond', return: 0.2 }], 'CHF')).toThrow(
      /shocks\[1\] repeats the shock on assetClass bond/,
    );
    expect(() => hypotheticalReturns(holdings, [{ all: true, return: -2 }], 'CHF')).toThrow(/shocks\[0\].return must be a finite number >= -1, got -2/);
  });

  it('gives the stress P&L of a foreign-currency book in base terms', () => {
    const values = Float64Array.of(1000, 500, 0, 0, 200, 300);
    const r = hypotheticalReturns(holdings, [{ currency: 'EUR', return: -0.1 }], 'CHF');
    // EUR holdings 500 + 200 lose 10%
    expect(stressPnl(values, r).pnl[0]).toBeCloseTo(-70, 10);
  });
});
