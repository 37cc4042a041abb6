import { describe, expect, it } from 'vitest';
import { filteredReturns, historicalLoss, scenarioPnl, scenarioPnlAt, tailCount } from '../../../src/risk/math/historicalSimulation.ts';
import { SP500_CLOSES, SP500_DATES } from './data/sp500Closes2008.ts';
import { createRandom } from '../../../src/demo/random.ts';

/** Log returns ln(P_t / P_t-1) of the S&P 500 closes of 2008, as a 250 x 1 scenario matrix. */
function sp500Returns(): Float64Array {
  const r = new Float64Array(SP500_CLOSES.length - 1);
  for (let t = 1; t < SP500_CLOSES.length; t++) r[t - 1] = Math.log(SP500_CLOSES[t] / SP500_CLOSES[t - 1]);
  return r;
}

/** The loss of 1,000,000 held in the index on a day whose close went from `before` to `after`. */
function lossOn(before: number, after: number): number {
  return 1_000_000 * (1 - after / before);
}

describe('historicalLoss on a real price series (S&P 500 closes of 2008, vega-datasets 3.2.1 sp500-2000.csv)', () => {
  const returns = sp500Returns();
  const { pnl, coverage, missing } = scenarioPnl(Float64Array.of(1_000_000), returns, 250);
  const result = historicalLoss(pnl, 0.99, 0.975);

  it('holds the 250 returns ending 2008-12-31 with full coverage', () => {
    expect(SP500_DATES.length).toBe(251);
    expect(SP500_DATES[250]).toBe('2008-12-31');
    expect(coverage).toBe(1);
    expect(missing.length).toBe(0);
  });

  it('gives as 99% VaR the 3rd largest loss, 2008-09-29 (k = ceil(250 x 0.01) = 3; computed by hand from the closes)', () => {
    // the three worst days of the window, from the file's closes (close before -> close of the day):
    // 2008-10-15 998.01001 -> 907.840027, 2008-12-01 896.23999 -> 816.210022, 2008-09-29 1213.27002 -> 1106.420044
    expect(result.varCount).toBe(3);
    expect(result.var).toBeCloseTo(lossOn(1213.27002, 1106.420044), 6);
    expect(result.var).toBeCloseTo(88_067.76, 2);
  });

  it('gives as 97.5% ES the mean of the 7 largest losses (k = ceil(250 x 0.025) = 7; computed by hand from the closes)', () => {
    const worstSeven = [
      lossOn(998.01001, 907.840027), // 2008-10-15
      lossOn(896.23999, 816.210022), // 2008-12-01
      lossOn(1213.27002, 1106.420044), // 2008-09-29
      lossOn(984.940002, 909.919983), // 2008-10-09
      lossOn(806.580017, 752.440002), // 2008-11-20
      lossOn(859.119995, 806.580017), // 2008-11-19
      lossOn(955.049988, 896.780029), // 2008-10-22
    ];
    expect(result.esCount).toBe(7);
    expect(result.es).toBeCloseTo(worstSeven.reduce((a, b) => a + b, 0) / 7, 6);
    expect(result.es).toBeCloseTo(76_167.27, 2);
  });

  it('does not mutate its input', () => {
    const copy = Float64Array.from(pnl);
    historicalLoss(pnl, 0.99, 0.975);
    expect(pnl).toEqual(copy);
  });
});

describe('tailCount', () => {
  it('is ceil(N (1 - a)) for the SPEC levels and lookbacks (SPEC section 9)', () => {
    expect(tailCount(250, 0.99)).toBe(3);
    expect(tailCount(250, 0.975)).toBe(7);
    expect(tailCount(100, 0.99)).toBe(1);
    expect(tailCount(500, 0.975)).toBe(13);
  });

  it('gives 5 for 500 scenarios at 99%, although 500 x (1 - 0.99) is 5.000000000000004 in binary', () => {
    expect(500 * (1 - 0.99)).toBeGreaterThan(5);
    expect(tailCount(500, 0.99)).toBe(5);
  });

  it('keeps at least one scenario in the tail for a short window', () => {
    expect(tailCount(1, 0.99)).toBe(1);
  });

  it('throws for a level outside (0, 1) and a fractional count', () => {
    expect(() => tailCount(250, 1)).toThrow(/tailCount: level must be in \(0, 1\), got 1/);
    expect(() => tailCount(2.5, 0.99)).toThrow(/scenarios must be an integer >= 1/);
  });
});

describe('scenarioPnl', () => {
  it('revalues each holding with exp(r) - 1 and adds them up (SPEC section 9; hand example)', () => {
    // two holdings, two scenarios: +1% and -2% log returns on 600, 0 and +3% on -400 (a short)
    const values = Float64Array.of(600, -400);
    const returns = Float64Array.of(0.01, 0, -0.02, 0.03);
    const { pnl } = scenarioPnl(values, returns, 2);
    expect(pnl[0]).toBeCloseTo(600 * (Math.exp(0.01) - 1), 12);
    expect(pnl[1]).toBeCloseTo(600 * (Math.exp(-0.02) - 1) - 400 * (Math.exp(0.03) - 1), 12);
  });

  it('leaves a holding with a missing return out of every scenario and says so, never as unchanged', () => {
    const values = Float64Array.of(750, 250);
    const returns = Float64Array.of(0.01, Number.NaN, -0.02, 0.05);
    const { pnl, coverage, missing } = scenarioPnl(values, returns, 2);
    expect(Array.from(missing)).toEqual([1]);
    expect(coverage).toBeCloseTo(0.75, 15);
    expect(pnl[1]).toBeCloseTo(750 * Math.expm1(-0.02), 12);
  });

  it('counts gross value for coverage with a short, and a zero position is never missing', () => {
    const { coverage, missing } = scenarioPnl(Float64Array.of(600, -400, 0), Float64Array.of(0.01, Number.NaN, Number.NaN), 1);
    expect(coverage).toBeCloseTo(0.6, 15);
    expect(Array.from(missing)).toEqual([1]);
  });

  it('takes a log return of -Infinity (a price gone to zero) as a total loss, +Infinity as missing', () => {
    const { pnl, missing } = scenarioPnl(Float64Array.of(300, 700), Float64Array.of(Number.NEGATIVE_INFINITY, Number.POSITIVE_INFINITY), 1);
    expect(pnl[0]).toBe(-300);
    expect(Array.from(missing)).toEqual([1]);
  });

  it('gives coverage NaN for a portfolio of zero gross value', () => {
    expect(scenarioPnl(Float64Array.of(0), Float64Array.of(0.01), 1).coverage).toBeNaN();
  });

  it('throws for a shape mismatch and a missing value', () => {
    expect(() => scenarioPnl(Float64Array.of(1, 2), Float64Array.of(0.01), 1)).toThrow(/scenarioPnl: returns has length 1, expected 2/);
    expect(() => scenarioPnl(Float64Array.of(Number.NaN), Float64Array.of(0.01), 1)).toThrow(/values\[0\] must be finite/);
  });

  it('does not mutate its inputs', () => {
    const values = Float64Array.of(600, -400);
    const returns = Float64Array.of(0.01, 0, -0.02, 0.03);
    scenarioPnl(values, returns, 2);
    expect(Array.from(values)).toEqual([600, -400]);
    expect(Array.from(returns)).toEqual([0.01, 0, -0.02, 0.03]);
  });
});

describe('scenarioPnlAt', () => {
  it('reads each holding\'s returns in place (per-security columns) with the figures of the row-major form, cash never moving', () => {
    // three holdings over three scenarios, the second with a gap; the third is cash (no column)
    const values = Float64Array.of(600, -400, 250);
    const logReturns = [Float64Array.of(0.01, -0.02, 0.005), Float64Array.of(0.03, Number.NaN, -0.01)];
    const rowMajor = new Float64Array(9);
    for (let s = 0; s < 3; s++) {
      rowMajor[s * 3] = logReturns[0][s];
      rowMajor[s * 3 + 1] = logReturns[1][s];
    }
    const expected = scenarioPnl(values, rowMajor, 3);
    // the columns stored after some other security's, simple returns taken once
    const columns = Float64Array.of(9, 9, 9, ...logReturns[0], ...logReturns[1]).map((r, i) => (i < 3 ? r : Math.expm1(r)));
    const got = scenarioPnlAt(values, columns, { at: Int32Array.of(3, 6, -1), stride: 1, first: 0 }, 3);
    expect(got).toEqual(expected);
    expect(Array.from(got.missing)).toEqual([1]);
    // the last two scenarios only: the gap still leaves the second holding out
    const tail = scenarioPnlAt(values, columns, { at: Int32Array.of(3, 6, -1), stride: 1, first: 1 }, 2);
    expect(Array.from(tail.pnl)).toEqual([600 * Math.expm1(-0.02), 600 * Math.expm1(0.005)]);
    expect(() => scenarioPnlAt(values, columns, { at: Int32Array.of(3, 7, -1), stride: 1, first: 0 }, 3)).toThrow(/holding 1's scenarios lie outside/);
  });
});

describe('historicalLoss', () => {
  it('orders the tail exactly as a full sort would, ties and signed zeros included', () => {
    // the order statistics by definition: losses sorted descending, +0 before -0
    const random = createRandom(7);
    const pnl = Float64Array.from({ length: 500 }, (_, i) => (i % 50 === 0 ? 0 : i % 49 === 0 ? -0 : Math.round(random.uniform() * 200 - 100)));
    const sorted = pnl.map((x) => -x).sort().reverse();
    const result = historicalLoss(pnl, 0.99, 0.975);
    expect(Object.is(result.var, sorted[result.varCount - 1])).toBe(true);
    let tail = 0;
    for (let k = 0; k < result.esCount; k++) tail += sorted[k];
    expect(result.es).toBe(tail / result.esCount);
    const zeros = historicalLoss(Float64Array.of(0, -0, 0, -0), 0.5, 0.5);
    expect(Object.is(zeros.var, -0)).toBe(false);
  });

  it('reports a negative VaR when even the k-th worst scenario gains (no floor at zero)', () => {
    const result = historicalLoss(Float64Array.of(5, 6, 7, 8), 0.75, 0.5);
    expect(result.var).toBe(-5);
    expect(result.es).toBe(-5.5);
  });

  it('works on a single scenario', () => {
    expect(historicalLoss(Float64Array.of(-3), 0.99, 0.975)).toEqual({ var: 3, es: 3, varCount: 1, esCount: 1 });
  });

  it('throws for an empty or NaN P&L', () => {
    expect(() => historicalLoss(new Float64Array(0), 0.99, 0.975)).toThrow(/pnl.length must be an integer >= 1/);
    expect(() => historicalLoss(Float64Array.of(1, Number.NaN), 0.99, 0.975)).toThrow(/pnl\[1\] must be finite/);
  });
});

describe('filteredReturns', () => {
  it('scales each return by sigma today / sigma then (Hull and White 1998; hand example)', () => {
    // a -2% day when sigma was 1%, today sigma is 2%: the scenario becomes -4%;
    // a +3% day of a second security at sigma 1.5%, today 0.5%: +1%
    const out = filteredReturns(Float64Array.of(-0.02, 0.03), 1, Float64Array.of(0.01, 0.015), Float64Array.of(0.02, 0.005));
    expect(out[0]).toBeCloseTo(-0.04, 15);
    expect(out[1]).toBeCloseTo(0.01, 15);
    const { pnl } = scenarioPnl(Float64Array.of(1000, 0), out, 1);
    expect(pnl[0]).toBeCloseTo(1000 * (Math.exp(-0.04) - 1), 12);
  });

  it('leaves the scenarios unchanged when sigma has not moved', () => {
    const returns = Float64Array.of(0.01, -0.02, 0.005, 0.03);
    const sigma = Float64Array.of(0.012, 0.02, 0.012, 0.02);
    expect(Array.from(filteredReturns(returns, 2, sigma, Float64Array.of(0.012, 0.02)))).toEqual(Array.from(returns));
  });

  it('keeps a missing return missing, maps zero over zero sigma to zero and a move over zero sigma to missing', () => {
    const out = filteredReturns(Float64Array.of(Number.NaN, 0, 0.01), 1, Float64Array.of(0.01, 0, 0), Float64Array.of(0.01, 0.01, 0.01));
    expect(out[0]).toBeNaN();
    expect(out[1]).toBe(0);
    expect(out[2]).toBeNaN();
  });

  it('throws for a negative or missing sigma and a shape mismatch', () => {
    expect(() => filteredReturns(Float64Array.of(0.01), 1, Float64Array.of(-0.01), Float64Array.of(0.01))).toThrow(
      /filteredReturns: sigmaPast\[0\] must be a non-negative finite sigma, got -0.01/,
    );
    expect(() => filteredReturns(Float64Array.of(0.01), 1, Float64Array.of(0.01), Float64Array.of(Number.NaN))).toThrow(/sigmaToday\[0\]/);
    expect(() => filteredReturns(Float64Array.of(0.01, 0.02), 1, Float64Array.of(0.01), Float64Array.of(0.01))).toThrow(/returns has length 2, expected 1/);
  });

  it('does not mutate its inputs', () => {
    const returns = Float64Array.of(-0.02);
    const past = Float64Array.of(0.01);
    const today = Float64Array.of(0.02);
    filteredReturns(returns, 1, past, today);
    expect([returns[0], past[0], today[0]]).toEqual([-0.02, 0.01, 0.02]);
  });
});
