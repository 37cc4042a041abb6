import { describe, expect, it } from 'vitest';
import {
  BacktestWindow,
  backtestSummary,
  baselZone,
  chiSquaredSurvival,
  christoffersenConditionalCoverage,
  christoffersenIndependence,
  exceptions,
  kupiecTest,
  transitionCounts,
} from '../../../src/risk/math/backtest.ts';

describe('chiSquaredSurvival', () => {
  it('gives 5% and 1% at the table critical values 3.841 and 6.635 for 1 d.o.f. (NIST/SEMATECH e-Handbook of Statistical Methods, 1.3.6.7.4; from memory)', () => {
    expect(chiSquaredSurvival(3.841, 1)).toBeCloseTo(0.05, 4);
    expect(chiSquaredSurvival(6.635, 1)).toBeCloseTo(0.01, 4);
    // the exact 95% point, z_0.975^2 = 1.959963984540054^2
    expect(chiSquaredSurvival(1.959963984540054 ** 2, 1)).toBeCloseTo(0.05, 14);
  });

  it('gives 5% and 1% at 5.991 and 9.210 for 2 d.o.f. (same table)', () => {
    expect(chiSquaredSurvival(5.991, 2)).toBeCloseTo(0.05, 4);
    expect(chiSquaredSurvival(9.21, 2)).toBeCloseTo(0.01, 4);
  });

  it('is 1 at zero and keeps relative accuracy far in the tail (erfc(5) = 1.5374597944280349e-12; A&S table 7.1, from memory)', () => {
    expect(chiSquaredSurvival(0, 1)).toBe(1);
    expect(chiSquaredSurvival(50, 1) / 1.5374597944280349e-12).toBeCloseTo(1, 12);
  });

  it('throws for a negative or NaN statistic and another degree of freedom', () => {
    expect(() => chiSquaredSurvival(-1, 1)).toThrow(/chiSquaredSurvival: x must be >= 0, got -1/);
    expect(() => chiSquaredSurvival(Number.NaN, 1)).toThrow(/x must be >= 0/);
    expect(() => chiSquaredSurvival(1, 3 as 1)).toThrow(/degreesOfFreedom must be 1 or 2, got 3/);
  });
});

describe('kupiecTest', () => {
  // Nonrejection regions of the proportion-of-failures test at 95% (LR < 3.841): Kupiec
  // (1995), as reprinted in P. Jorion, Value at Risk, chapter on backtesting; from memory.
  // For T = 255 and p = 1% the book prints "N < 7", yet LR(0) = 5.13 rejects a clean record too.
  const regions: Array<[level: number, days: number, low: number, high: number]> = [
    [0.99, 255, 1, 6],
    [0.99, 510, 2, 10],
    [0.99, 1000, 5, 16],
    [0.975, 255, 3, 11],
    [0.975, 510, 7, 20],
    [0.975, 1000, 16, 35],
    [0.95, 255, 7, 20],
    [0.95, 510, 17, 35],
    [0.95, 1000, 38, 64],
    [0.9, 255, 17, 35],
    [0.9, 510, 39, 64],
    [0.9, 1000, 82, 119],
  ];

  it.each(regions)('at level %f over %i days accepts %i .. %i exceptions and rejects one fewer and one more (Kupiec 1995 via Jorion)', (level, days, low, high) => {
    expect(kupiecTest(low, days, level).lr).toBeLessThan(3.841);
    expect(kupiecTest(high, days, level).lr).toBeLessThan(3.841);
    expect(kupiecTest(low - 1, days, level).lr).toBeGreaterThan(3.841);
    expect(kupiecTest(high + 1, days, level).lr).toBeGreaterThan(3.841);
    expect(kupiecTest(high + 1, days, level).p).toBeLessThan(0.05);
  });

  it('computes LR for 10 exceptions in 250 days at 99% from the formula by hand', () => {
    const expected = -2 * (240 * Math.log(0.99) + 10 * Math.log(0.01)) + 2 * (240 * Math.log(0.96) + 10 * Math.log(0.04));
    const result = kupiecTest(10, 250, 0.99);
    expect(result.lr).toBeCloseTo(expected, 10);
    expect(result.lr).toBeCloseTo(12.955, 3);
    expect(result.p).toBeCloseTo(chiSquaredSurvival(expected, 1), 14);
  });

  it('is 0 with p-value 1 when the exceptions match the level exactly', () => {
    const result = kupiecTest(5, 500, 0.99);
    expect(result.lr).toBeCloseTo(0, 12);
    expect(result.p).toBeCloseTo(1, 6);
  });

  it('is defined for no exceptions and for exceptions every day (0 ln 0 = 0)', () => {
    expect(kupiecTest(0, 250, 0.99).lr).toBeCloseTo(-2 * 250 * Math.log(0.99), 12);
    expect(kupiecTest(3, 3, 0.99).lr).toBeCloseTo(-2 * 3 * Math.log(0.01), 12);
  });

  it('throws for more exceptions than days, a fractional count and a bad level', () => {
    expect(() => kupiecTest(11, 10, 0.99)).toThrow(/kupiecTest: exceptionCount 11 exceeds days 10/);
    expect(() => kupiecTest(1.5, 10, 0.99)).toThrow(/exceptionCount must be an integer >= 0/);
    expect(() => kupiecTest(1, 10, 99)).toThrow(/level must be in \(0, 1\)/);
  });
});

describe('exceptions', () => {
  it('marks a day whose loss exceeds the VaR predicted for it, strictly (SPEC section 9: loss > VaR)', () => {
    const flags = exceptions(Float64Array.of(-120, -100, 50, -99.5), Float64Array.of(100, 100, 100, 100));
    expect(Array.from(flags)).toEqual([1, 0, 0, 0]);
  });

  it('throws for a missing P&L or VaR and mismatched lengths', () => {
    expect(() => exceptions(Float64Array.of(Number.NaN), Float64Array.of(1))).toThrow(/exceptions: pnl\[0\] must be finite/);
    expect(() => exceptions(Float64Array.of(1), Float64Array.of(Number.NaN))).toThrow(/predictedVaR\[0\] must be finite/);
    expect(() => exceptions(Float64Array.of(1, 2), Float64Array.of(1))).toThrow(/predictedVaR has length 1, expected 2/);
  });

  it('does not mutate its inputs', () => {
    const pnl = Float64Array.of(-120, 3);
    const v = Float64Array.of(100, 100);
    exceptions(pnl, v);
    expect(Array.from(pnl)).toEqual([-120, 3]);
    expect(Array.from(v)).toEqual([100, 100]);
  });
});

describe('christoffersenIndependence', () => {
  // 20 days, exceptions on days 4, 5, 11 and 17 (0-based): n00 = 12, n01 = 3, n10 = 3, n11 = 1
  const sequence = new Uint8Array(20);
  for (const day of [4, 5, 11, 17]) sequence[day] = 1;

  it('counts the transitions', () => {
    expect(transitionCounts(sequence)).toEqual({ n00: 12, n01: 3, n10: 3, n11: 1 });
  });

  it('matches the formula of Christoffersen (1998) worked by hand', () => {
    // pi01 = 3/15, pi11 = 1/4, pi = 4/19
    const restricted = 15 * Math.log(15 / 19) + 4 * Math.log(4 / 19);
    const unrestricted = 12 * Math.log(0.8) + 3 * Math.log(0.2) + 3 * Math.log(0.75) + Math.log(0.25);
    const result = christoffersenIndependence(sequence);
    expect(result.lr).toBeCloseTo(-2 * restricted + 2 * unrestricted, 12);
    expect(result.p).toBeCloseTo(chiSquaredSurvival(result.lr, 1), 14);
  });

  it('rejects independence for clustered exceptions and not for spread ones', () => {
    const clustered = new Uint8Array(250);
    clustered.fill(1, 100, 106);
    const spread = new Uint8Array(250);
    for (const day of [20, 70, 120, 170, 220, 240]) spread[day] = 1;
    expect(christoffersenIndependence(clustered).p).toBeLessThan(0.001);
    expect(christoffersenIndependence(spread).p).toBeGreaterThan(0.3);
  });

  it('gives LR 0 and p 1 without any exception', () => {
    expect(christoffersenIndependence(new Uint8Array(250))).toEqual({ lr: 0, p: 1 });
  });

  it('throws for a sequence shorter than 2 days or holding something other than 0 and 1', () => {
    expect(() => christoffersenIndependence(new Uint8Array(1))).toThrow(/sequence.length must be an integer >= 2/);
    expect(() => christoffersenIndependence(Uint8Array.of(0, 2))).toThrow(/must hold 0 and 1 only, got 2/);
  });
});

describe('christoffersenConditionalCoverage', () => {
  it('adds the Kupiec and independence statistics and tests them with 2 d.o.f. (Christoffersen 1998)', () => {
    const sequence = new Uint8Array(250);
    sequence.fill(1, 100, 104);
    const joint = christoffersenConditionalCoverage(sequence, 0.99);
    const sum = kupiecTest(4, 250, 0.99).lr + christoffersenIndependence(sequence).lr;
    expect(joint.lr).toBeCloseTo(sum, 12);
    expect(joint.p).toBeCloseTo(Math.exp(-sum / 2), 14);
  });
});

describe('baselZone', () => {
  it('is green for 0-4, yellow for 5-9 and red for 10 or more exceptions in 250 days (Basel Committee, 1996)', () => {
    const zones = Array.from({ length: 13 }, (_, x) => baselZone(x, 250));
    expect(zones).toEqual(['green', 'green', 'green', 'green', 'green', 'yellow', 'yellow', 'yellow', 'yellow', 'yellow', 'red', 'red', 'red']);
  });

  it('puts the boundaries where the binomial(250, 1%) cumulative probability passes 95% and 99.99% (the 1996 framework\'s rule; 89.22% at 4, 95.88% at 5, 99.97% at 9, 99.99% at 10 from its table, from memory)', () => {
    const cumulative: number[] = [];
    let term = 0.99 ** 250;
    let total = 0;
    for (let x = 0; x <= 10; x++) {
      total += term;
      cumulative.push(total);
      term *= ((250 - x) / (x + 1)) * (0.01 / 0.99);
    }
    expect(cumulative[4]).toBeCloseTo(0.8922, 4);
    expect(cumulative[5]).toBeCloseTo(0.9588, 4);
    expect(cumulative[9]).toBeCloseTo(0.9997, 4);
    expect(cumulative[10]).toBeCloseTo(0.9999, 4);
    for (let x = 0; x <= 10; x++) {
      // green below 95% cumulative probability, red from 99.99% on, yellow between
      const expected = cumulative[x] < 0.95 ? 'green' : cumulative[x] < 0.9999 ? 'yellow' : 'red';
      expect(baselZone(x, 250)).toBe(expected);
    }
  });

  it('throws for another observation count, a negative count and more exceptions than days', () => {
    expect(() => baselZone(3, 200)).toThrow(/baselZone: the zones are defined for 250 observations, got 200/);
    expect(() => baselZone(-1, 250)).toThrow(/exceptionCount must be an integer >= 0/);
    expect(() => baselZone(251, 250)).toThrow(/exceeds observations 250/);
  });
});

describe('backtestSummary', () => {
  it('counts the last 250 tested days only and gives their Kupiec statistic and zone', () => {
    const flags = new Uint8Array(300);
    flags.fill(1, 10, 20); // ten exceptions that have left the window
    for (const day of [100, 150, 200, 250, 290, 299]) flags[day] = 1;
    const summary = backtestSummary(flags, 0.99);
    expect(summary.days).toBe(250);
    expect(summary.exceptions).toBe(6);
    expect(summary.zone).toBe('yellow');
    expect(summary.kupiec).toEqual(kupiecTest(6, 250, 0.99));
    expect(summary.independence).toEqual(christoffersenIndependence(flags.subarray(50)));
  });

  it('gives no zone before 250 tested days and no independence test for one day', () => {
    const early = backtestSummary(Uint8Array.of(0, 1, 0), 0.99);
    expect(early.zone).toBeNull();
    expect(early.kupiec).toEqual(kupiecTest(1, 3, 0.99));
    expect(backtestSummary(Uint8Array.of(1), 0.99).independence).toBeNull();
  });

  it('throws for no tested day and does not mutate its input', () => {
    expect(() => backtestSummary(new Uint8Array(0), 0.99)).toThrow(/backtestSummary: flags.length must be an integer >= 1/);
    const flags = Uint8Array.of(0, 1, 1);
    backtestSummary(flags, 0.99);
    expect(Array.from(flags)).toEqual([0, 1, 1]);
  });
});

describe('BacktestWindow', () => {
  it('keeps the counts of the last 250 days as days come and go: each day\'s figures are those of the window counted afresh', () => {
    // clustered exceptions entering and leaving the window, past 250 days twice over
    const flags = Uint8Array.from({ length: 620 }, (_, t) => (t % 97 < 3 || t % 41 === 0 ? 1 : 0));
    const window = new BacktestWindow();
    for (let t = 0; t < flags.length; t++) {
      window.push(flags[t]);
      const days = flags.subarray(Math.max(0, t + 1 - 250), t + 1);
      const count = days.reduce((sum, f) => sum + f, 0);
      expect(window.summary(0.99)).toEqual({
        days: days.length,
        exceptions: count,
        kupiec: kupiecTest(count, days.length, 0.99),
        independence: days.length >= 2 ? christoffersenIndependence(days) : null,
        zone: days.length === 250 ? baselZone(count, 250) : null,
      });
    }
    expect(() => window.push(2)).toThrow(/a flag must be 0 or 1, got 2/);
  });
});
