import { Matrix } from 'ml-matrix';
import { mean, sampleCorrelation, sampleVariance } from 'simple-statistics';
import { describe, expect, it } from 'vitest';
import { deliveriesOf } from '../../src/demo/deliveries.ts';
import { holdingsOn, valueOf } from '../../src/demo/holdings.ts';
import { businessDays, correlationFromLoadings, simulateMarket } from '../../src/demo/market.ts';
import { createRandom } from '../../src/demo/random.ts';
import { buildScenario } from '../../src/demo/scenario.ts';
import { ACCOUNTS, BENCHMARKS, SECURITIES } from '../../src/demo/universe.ts';

describe('createRandom', () => {
  it('draws standard normals: mean 0 and variance 1 within sampling error (simple-statistics mean/sampleVariance)', () => {
    const random = createRandom(7);
    const draws = Array.from({ length: 100_000 }, () => random.normal());
    // standard error of the mean is 1/sqrt(n) = 0.0032; of the variance about sqrt(2/n) = 0.0045
    expect(Math.abs(mean(draws))).toBeLessThan(0.015);
    expect(Math.abs(sampleVariance(draws) - 1)).toBeLessThan(0.02);
  });

  it('repeats itself for the same seed and differs for another', () => {
    const a = createRandom(42);
    const b = createRandom(42);
    const c = createRandom(43);
    const seqA = Array.from({ length: 5 }, () => a.uniform());
    expect(Array.from({ length: 5 }, () => b.uniform())).toEqual(seqA);
    expect(Array.from({ length: 5 }, () => c.uniform())).not.toEqual(seqA);
    expect(seqA.every((u) => u > 0 && u < 1)).toBe(true);
  });

  it('refuses a seed that is not an integer', () => {
    expect(() => createRandom(0.5)).toThrow(/integer/);
  });
});

describe('businessDays', () => {
  it('skips weekends (2024-03-01 was a Friday, ISO 8601 calendar)', () => {
    expect(businessDays('2024-03-01', 3)).toEqual(['2024-03-01', '2024-03-04', '2024-03-05']);
  });
  it('refuses a date that is not YYYY-MM-DD', () => {
    expect(() => businessDays('03/01/2024', 2)).toThrow(/not a YYYY-MM-DD/);
  });
});

describe('correlationFromLoadings', () => {
  it('builds B B\' with a unit diagonal', () => {
    const c = correlationFromLoadings([
      [0.6, 0.2],
      [0.5, -0.3],
    ]);
    expect(c.get(0, 0)).toBe(1);
    expect(c.get(0, 1)).toBeCloseTo(0.6 * 0.5 - 0.2 * 0.3, 12);
  });
  it('refuses a row whose norm reaches 1 (the matrix would not be positive definite)', () => {
    expect(() => correlationFromLoadings([[0.8, 0.6]])).toThrow(/norm/);
  });
});

describe('simulateMarket', () => {
  it('gives calm daily log returns whose sample correlation matches the factor model (simple-statistics sampleCorrelation)', () => {
    const dates = businessDays('2020-01-06', 3000);
    const market = simulateMarket({ seed: 11, dates, turbulence: { from: 0, to: 0 } });
    const returns = (id: string) => {
      const p = market.prices.get(id)!;
      return p.slice(1).map((x, t) => Math.log(x / p[t]));
    };
    const c = correlationFromLoadings(SECURITIES.map((s) => [...s.loadings]));
    const pairs: [number, number][] = [
      [0, 2], // two US equities
      [11, 12], // two US bonds
      [2, 12], // equity against bond
      [7, 8], // two EUR equities (shared europe factor)
    ];
    for (const [i, j] of pairs) {
      // the standard error of a correlation over 3000 days is about 0.02; 4-decimal price rounding adds a little
      expect(sampleCorrelation(returns(SECURITIES[i].id), returns(SECURITIES[j].id))).toBeCloseTo(c.get(i, j), 1);
    }
    const vellance = returns('EQ-VELLANCE');
    expect(Math.sqrt(252 * sampleVariance(vellance))).toBeCloseTo(SECURITIES[2].vol, 1);
  });

  it('raises volatility in the turbulent stretch', () => {
    const dates = businessDays('2020-01-06', 400);
    const market = simulateMarket({ seed: 5, dates, turbulence: { from: 200, to: 400 } });
    const p = market.prices.get('EQ-HARROWDEN')!;
    const r = p.slice(1).map((x, t) => Math.log(x / p[t]));
    expect(Math.sqrt(sampleVariance(r.slice(200)) / sampleVariance(r.slice(0, 199)))).toBeGreaterThan(1.8);
  });
});

describe('buildScenario', () => {
  const scenario = buildScenario();

  it('is deterministic: the same seed delivers the same files, byte for byte', () => {
    const again = deliveriesOf(buildScenario());
    expect(again).toEqual(deliveriesOf(scenario));
    expect(deliveriesOf(buildScenario(scenario.seed + 1))[1].files[1].text).not.toBe(again[1].files[1].text);
  });

  it('gives every account target weights that add up to 1', () => {
    for (const a of ACCOUNTS) {
      expect(Object.values(a.targets).reduce((x, y) => x + y, 0)).toBeCloseTo(1, 12);
    }
  });

  it('gives the benchmark policy weights that add up to 1, with securities the account does not hold', () => {
    for (const b of BENCHMARKS) {
      expect(Object.values(b.weights).reduce((x, y) => x + y, 0)).toBeCloseTo(1, 12);
      const account = ACCOUNTS.find((a) => a.id === b.portfolioId)!;
      expect(Object.keys(b.weights).filter((id) => !(id in account.targets)).length).toBeGreaterThan(0);
      for (const id of Object.keys(b.weights)) expect(id.startsWith('CASH:') || SECURITIES.some((s) => s.id === id)).toBe(true);
    }
  });

  it('rebalances without creating or destroying value (the rounding remainder stays in cash)', () => {
    const { dates } = scenario.market;
    const rebalances = scenario.snapshots.filter((s) => s.reason === 'rebalance' && s.date !== dates[0]);
    expect(rebalances.length).toBeGreaterThan(30 * ACCOUNTS.length);
    for (const snap of rebalances.slice(0, 20)) {
      const t = dates.indexOf(snap.date);
      const before = holdingsOn(scenario.snapshots.filter((s) => s.date < snap.date), snap.portfolioId, dates[t - 1]);
      expect(valueOf(scenario.market, snap.quantities, t)).toBeCloseTo(valueOf(scenario.market, before, t), 1);
    }
  });

  it('moves the growth account to lower-risk targets on the de-risk drop: equities fall from 85% to 40% of value', () => {
    const { derisk } = scenario.incidents;
    const { dates } = scenario.market;
    const t = dates.indexOf(derisk.date);
    const equityShare = (date: string, at: number) => {
      const q = holdingsOn(scenario.snapshots, derisk.portfolioId, date);
      const equity = new Map([...q].filter(([id]) => id.startsWith('EQ-')));
      return valueOf(scenario.market, equity, at) / valueOf(scenario.market, q, at);
    };
    expect(t).toBe(scenario.historyDays + derisk.drop);
    expect(equityShare(dates[t - 1], t - 1)).toBeGreaterThan(0.75);
    expect(equityShare(dates[t], t)).toBeCloseTo(0.4, 2);
    expect(Object.values(derisk.targets).reduce((x, y) => x + y, 0)).toBeCloseTo(1, 12);
  });

  it('puts every mishap on its own day inside the daily drops', () => {
    const { stale, correction, malformed, derisk } = scenario.incidents;
    const drops = scenario.market.dates.length - scenario.historyDays;
    const days = [stale.drop, correction.drop, correction.drop + 1, malformed.drop, malformed.drop + 1, derisk.drop];
    expect(new Set(days).size).toBe(days.length);
    expect(days.every((d) => d >= 0 && d < drops)).toBe(true);
  });

  it('moves cash in and out without touching the securities held', () => {
    for (const flow of scenario.incidents.cashFlows) {
      const { dates } = scenario.market;
      const t = dates.indexOf(flow.date);
      const after = holdingsOn(scenario.snapshots, flow.portfolioId, flow.date);
      const before = holdingsOn(scenario.snapshots, flow.portfolioId, dates[t - 1]);
      expect(valueOf(scenario.market, after, t) - valueOf(scenario.market, before, t)).toBeCloseTo(flow.amount, 2);
      for (const [id, q] of before) if (id !== 'CASH:USD') expect(after.get(id)).toBe(q);
    }
    expect(scenario.incidents.cashFlows.some((f) => f.amount > 0)).toBe(true);
    expect(scenario.incidents.cashFlows.some((f) => f.amount < 0)).toBe(true);
  });
});

describe('deliveriesOf', () => {
  const scenario = buildScenario();
  const deliveries = deliveriesOf(scenario);
  const byName = new Map(deliveries.flatMap((d) => d.files.map((f) => [f.name, f.text] as const)));
  const dropDate = (drop: number) => scenario.market.dates[scenario.historyDays + drop].replaceAll('-', '');

  it('starts with one history load of each kind, then one delivery per business day', () => {
    expect(deliveries[0].files.map((f) => f.name.split('_')[0].replace('.csv', ''))).toEqual(['securities', 'fx', 'prices', 'positions', 'benchmarks']);
    expect(deliveries).toHaveLength(1 + scenario.market.dates.length - scenario.historyDays);
    const historyPrices = deliveries[0].files[2].text.trim().split('\n');
    expect(historyPrices).toHaveLength(1 + scenario.historyDays * SECURITIES.length);
  });

  it('leaves a bond out of one day, sends one wrong price and its correction, and one file with a negative price', () => {
    const { stale, correction, malformed } = scenario.incidents;
    expect(byName.get(`prices_${dropDate(stale.drop)}.csv`)).not.toContain(stale.securityId);
    const wrong = byName.get(`prices_${dropDate(correction.drop)}.csv`)!;
    const fixed = byName.get(`prices_${dropDate(correction.drop)}_correction.csv`)!;
    const priceIn = (text: string) => Number(text.split('\n').find((l) => l.includes(correction.securityId))!.split(',')[2]);
    expect(priceIn(wrong) / priceIn(fixed)).toBeCloseTo(correction.wrongFactor, 3);
    expect(byName.get(`prices_${dropDate(malformed.drop)}.csv`)).toMatch(new RegExp(`${malformed.securityId},-\\d`));
    expect(byName.get(`prices_${dropDate(malformed.drop)}_resend.csv`)).not.toMatch(/,-\d/);
  });

  it('delivers daily snapshots of every account, cash included', () => {
    const text = byName.get(`positions_${dropDate(10)}.csv`)!;
    for (const a of ACCOUNTS) expect(text).toContain(`,${a.id},CASH:USD,`);
    expect(text).toContain('fpw-balanced,CASH:EUR,');
  });
});
