import { businessDays } from '../../../src/demo/market.ts';
import { createRandom } from '../../../src/demo/random.ts';
import type { ConfigInput } from '../../../src/config/schema.ts';
import type { Database } from '../../../src/storage/database.ts';
import { insertDeliveries, type Deliveries } from '../../helpers/rawRows.ts';

/**
 * A seeded scenario of invented securities and accounts for the risk-stage tests: base
 * USD, securities in USD and EUR, cash in both, a listing that starts mid-history, a
 * price missing for three days (carried, flagged stale) and one missing for seven
 * (past maxStaleDays 5: unpriced, history broken). Held as plain arrays so the test's
 * reference computation reads the same raw inputs the database gets.
 */

export interface ScenarioSecurity {
  id: string;
  currency: 'USD' | 'EUR';
  /** Day the first price is delivered. */
  firstDay: number;
  /** Days without a price delivery. */
  gaps: [number, number][];
}

export interface Snapshot {
  day: number;
  portfolio: string;
  quantities: Record<string, number>;
}

export interface Scenario {
  dates: string[];
  securities: ScenarioSecurity[];
  /** price[security id][day]: close in the security's currency, null when not delivered. */
  prices: Record<string, (number | null)[]>;
  /** USD per EUR, delivered every day. */
  eurUsd: number[];
  snapshots: Snapshot[];
}

/** The risk settings the stage tests run with (a short seed so the EWMA starts early). */
export const RISK: ConfigInput['risk'] = {
  windows: [21, 63],
  tradingDaysPerYear: 252,
  ewma: { enabled: true, lambda: 0.94, seedDays: 10 },
};

export const STALE_GAP: [number, number] = [100, 102];
export const LONG_GAP: [number, number] = [170, 176];
export const LISTING_DAY = 120;

const SECURITIES: (ScenarioSecurity & { vol: number; beta: number; start: number })[] = [
  { id: 'EQ-NORDWIND', currency: 'USD', firstDay: 0, gaps: [], vol: 0.014, beta: 1.0, start: 84.2 },
  { id: 'EQ-SALTMARSH', currency: 'EUR', firstDay: 0, gaps: [], vol: 0.011, beta: 0.8, start: 41.75 },
  { id: 'BD-KESTREL-28', currency: 'USD', firstDay: 0, gaps: [], vol: 0.003, beta: -0.1, start: 98.6 },
  { id: 'EQ-QUILLON', currency: 'USD', firstDay: 0, gaps: [STALE_GAP], vol: 0.019, beta: 1.2, start: 23.4 },
  { id: 'EQ-LANTERN', currency: 'EUR', firstDay: LISTING_DAY, gaps: [], vol: 0.017, beta: 0.9, start: 12.1 },
  { id: 'EQ-FERNHOLT', currency: 'EUR', firstDay: 0, gaps: [LONG_GAP], vol: 0.009, beta: 0.6, start: 66.0 },
];

export function buildScenario(days = 230, seed = 20240102): Scenario {
  const random = createRandom(seed);
  const dates = businessDays('2024-01-02', days);
  const prices: Record<string, (number | null)[]> = {};
  const levels = SECURITIES.map((s) => s.start);
  const eurUsd: number[] = [];
  let eur = 1.0843;
  for (let d = 0; d < days; d++) {
    const market = 0.008 * random.normal();
    if (d > 0) eur *= Math.exp(0.004 * random.normal());
    eurUsd.push(round(eur, 6));
    SECURITIES.forEach((s, i) => {
      if (d > 0) levels[i] *= Math.exp(s.beta * market + s.vol * random.normal());
      const delivered = d >= s.firstDay && !s.gaps.some(([a, b]) => d >= a && d <= b);
      (prices[s.id] ??= []).push(delivered ? round(levels[i], 4) : null);
    });
  }
  const snapshots: Snapshot[] = [
    { day: 0, portfolio: 'acct-growth', quantities: { 'EQ-NORDWIND': 1200, 'EQ-SALTMARSH': 900, 'EQ-QUILLON': 1500, 'CASH:USD': 12000 } },
    { day: 60, portfolio: 'acct-growth', quantities: { 'EQ-NORDWIND': 1100, 'EQ-SALTMARSH': 1000, 'EQ-QUILLON': 1700, 'CASH:USD': 9000 } },
    {
      day: 150,
      portfolio: 'acct-growth',
      quantities: { 'EQ-NORDWIND': 1100, 'EQ-SALTMARSH': 950, 'EQ-QUILLON': 1600, 'EQ-LANTERN': 700, 'CASH:USD': 8000 },
    },
    { day: 10, portfolio: 'acct-income', quantities: { 'BD-KESTREL-28': 900, 'EQ-SALTMARSH': 500, 'EQ-FERNHOLT': 100, 'CASH:EUR': 9000 } },
    { day: 90, portfolio: 'acct-income', quantities: { 'BD-KESTREL-28': 950, 'EQ-SALTMARSH': 450, 'EQ-FERNHOLT': 110, 'CASH:EUR': 8000 } },
    { day: 227, portfolio: 'acct-income', quantities: { 'BD-KESTREL-28': 900, 'EQ-SALTMARSH': 500, 'EQ-FERNHOLT': 110, 'CASH:EUR': 7000 } },
  ];
  return { dates, securities: SECURITIES.map(({ id, currency, firstDay, gaps }) => ({ id, currency, firstDay, gaps })), prices, eurUsd, snapshots };
}

/**
 * The raw rows of days [fromDay, toDay] as if one file per table per day had arrived
 * (file_id grows with the day), plus the securities reference with day 0.
 */
export function scenarioDeliveries(s: Scenario, fromDay: number, toDay: number): Deliveries {
  const out: Deliveries = { prices: [], positions: [], fx: [], securities: [] };
  if (fromDay === 0) out.securities = s.securities.map((sec, i) => ({ fileId: 1, line: i + 1, securityId: sec.id, currency: sec.currency }));
  for (let d = fromDay; d <= toDay; d++) {
    const date = s.dates[d];
    const fileId = 10 * (d + 1);
    s.securities.forEach((sec, i) => {
      const price = s.prices[sec.id][d];
      if (price !== null) out.prices.push({ fileId, line: i + 1, date, securityId: sec.id, price, currency: sec.currency });
    });
    out.fx.push({ fileId: fileId + 1, line: 1, date, currency: 'EUR', rate: s.eurUsd[d] });
    for (const snap of s.snapshots.filter((x) => x.day === d)) {
      Object.entries(snap.quantities).forEach(([securityId, quantity], i) =>
        out.positions.push({ fileId: fileId + 2, line: i + 1, date, portfolioId: snap.portfolio, securityId, quantity }),
      );
    }
  }
  return out;
}

/** Inserts the raw rows of days [fromDay, toDay] (see scenarioDeliveries). */
export const loadDays = (db: Database, s: Scenario, fromDay: number, toDay: number) => insertDeliveries(db, scenarioDeliveries(s, fromDay, toDay));

/** A later delivery for one price (a correction): a higher file_id supersedes the earlier row. */
export async function correctPrice(db: Database, s: Scenario, securityId: string, day: number, price: number): Promise<void> {
  const sec = s.securities.find((x) => x.id === securityId);
  if (!sec) throw new Error(`no security ${securityId}`);
  s.prices[securityId][day] = price;
  await db.run(`insert into prices values (100000, 1, '${s.dates[day]}', '${securityId}', ${price}, '${sec.currency}')`);
}

function round(x: number, decimals: number): number {
  const f = 10 ** decimals;
  return Math.round(x * f) / f;
}
