import { sum } from 'simple-statistics';
import type { Deliveries } from './rawRows.ts';

/**
 * An independent, deliberately plain re-computation of the view definitions (SPEC §3-§4)
 * from the raw rows: loops over dates and maps, no SQL. The views are checked against it,
 * and the risk stage's reference (test/risk/stage/reference.ts) builds on it.
 */

export interface ReferenceResult {
  valuationDates: string[];
  /** key `portfolio|date|security`; priceStale: a carried (not same-day) price within max_stale_days */
  weights: Map<string, { valueBase: number | null; weight: number | null; priceStale: boolean }>;
  /** key `portfolio|date` */
  portfolioValues: Map<string, number | null>;
  /** key `security|date` */
  securityLogReturns: Map<string, number | null>;
  /** key `portfolio|date` */
  portfolioReturns: Map<string, { simpleReturn: number | null; coveredWeight: number | null }>;
}

const isCash = (id: string) => id.startsWith('CASH:');

/** The row of the latest delivery (highest file, then line) for each key. */
function latestBy<T extends { fileId: number; line: number }>(rows: T[], key: (r: T) => string): Map<string, T> {
  const out = new Map<string, T>();
  for (const r of rows) {
    const seen = out.get(key(r));
    if (!seen || r.fileId > seen.fileId || (r.fileId === seen.fileId && r.line > seen.line)) out.set(key(r), r);
  }
  return out;
}

export function referenceViews(raw: Deliveries, baseCurrency: string, maxStaleDays: number): ReferenceResult {
  const prices = [...latestBy(raw.prices, (r) => `${r.date}|${r.securityId}`).values()];
  const fx = [...latestBy(raw.fx, (r) => `${r.date}|${r.currency}`).values()];
  const securityCurrency = new Map([...latestBy(raw.securities, (r) => r.securityId).values()].map((r) => [r.securityId, r.currency]));

  // snapshots: per portfolio and date, the rows of the latest file delivering them
  const snapshotFile = new Map<string, number>();
  for (const r of raw.positions) {
    const k = `${r.portfolioId}|${r.date}`;
    snapshotFile.set(k, Math.max(snapshotFile.get(k) ?? -Infinity, r.fileId));
  }
  const snapshots = new Map<string, Map<string, { date: string; rows: Map<string, number> }>>();
  for (const r of raw.positions) {
    if (snapshotFile.get(`${r.portfolioId}|${r.date}`) !== r.fileId) continue;
    const byDate = snapshots.get(r.portfolioId) ?? new Map();
    snapshots.set(r.portfolioId, byDate);
    const snap = byDate.get(r.date) ?? { date: r.date, rows: new Map() };
    byDate.set(r.date, snap);
    snap.rows.set(r.securityId, r.quantity);
  }
  const inEffect = (portfolio: string, date: string) => {
    let best: { date: string; rows: Map<string, number> } | undefined;
    for (const snap of snapshots.get(portfolio)!.values()) if (snap.date <= date && (!best || snap.date > best.date)) best = snap;
    return best;
  };
  const heldOn = (security: string, date: string) =>
    [...snapshots.keys()].some((p) => (inEffect(p, date)?.rows.get(security) ?? 0) !== 0);

  const valuationDates = [...new Set(prices.filter((p) => !isCash(p.securityId) && heldOn(p.securityId, p.date)).map((p) => p.date))].sort();

  // the last observation on or before valuation date k, if not more than maxStaleDays valuation dates old
  const carried = <T extends { date: string }>(series: T[], k: number): { row: T; usable: boolean; staleDays: number } | undefined => {
    const date = valuationDates[k];
    const row = series.filter((r) => r.date <= date).sort((a, b) => (a.date < b.date ? 1 : -1))[0];
    if (!row) return undefined;
    const staleDays = valuationDates.filter((d) => d > row.date && d <= date).length;
    return { row, usable: staleDays <= maxStaleDays, staleDays };
  };
  const priceStale = (security: string, k: number) => {
    const c = isCash(security) ? undefined : carried(prices.filter((p) => p.securityId === security), k);
    return c !== undefined && c.usable && c.staleDays > 0;
  };
  const priceLocal = (security: string, k: number) => {
    const c = carried(prices.filter((p) => p.securityId === security), k);
    return c?.usable ? c.row.price : null;
  };
  // a price row's currency, else the securities table's, else the base currency
  const currencyOf = (security: string) =>
    isCash(security)
      ? security.slice(5)
      : (prices.find((p) => p.securityId === security && p.currency !== null)?.currency ?? securityCurrency.get(security) ?? baseCurrency);
  const rate = (currency: string, k: number) => {
    if (currency === baseCurrency) return 1;
    const c = carried(fx.filter((r) => r.currency === currency), k);
    return c?.usable ? c.row.rate : null;
  };
  const priceBase = (security: string, k: number) => {
    const p = isCash(security) ? 1 : priceLocal(security, k);
    const r = rate(currencyOf(security), k);
    return p === null || r === null ? null : p * r;
  };

  const result: ReferenceResult = {
    valuationDates,
    weights: new Map(),
    portfolioValues: new Map(),
    securityLogReturns: new Map(),
    portfolioReturns: new Map(),
  };

  // cash in another currency has the fx return as its base-currency return (SPEC §3, round 2)
  const isBaseCash = (id: string) => isCash(id) && currencyOf(id) === baseCurrency;
  const everHeld = new Set<string>();
  for (const byDate of snapshots.values()) for (const snap of byDate.values()) for (const [s, q] of snap.rows) if (q !== 0 && !isBaseCash(s)) everHeld.add(s);
  for (const security of everHeld) {
    const observed = isCash(security) ? fx.filter((r) => r.currency === currencyOf(security)) : prices.filter((p) => p.securityId === security);
    const firstPrice = observed.map((p) => p.date).sort()[0];
    for (let k = 1; k < valuationDates.length; k++) {
      if (firstPrice === undefined || firstPrice > valuationDates[k - 1]) continue;
      const now = priceBase(security, k);
      const before = priceBase(security, k - 1);
      result.securityLogReturns.set(`${security}|${valuationDates[k]}`, now === null || before === null ? null : Math.log(now / before));
    }
  }

  for (const portfolio of snapshots.keys()) {
    let previous: { k: number; weights: Map<string, number | null> } | undefined;
    for (let k = 0; k < valuationDates.length; k++) {
      const date = valuationDates[k];
      const snap = inEffect(portfolio, date);
      if (!snap) continue;
      const held = [...snap.rows].filter(([, q]) => q !== 0);
      if (held.length === 0) continue;
      const values = held.map(([s, q]) => {
        const pb = priceBase(s, k);
        return [s, pb === null ? null : q * pb] as const;
      });
      const total = values.every(([, v]) => v !== null) ? sum(values.map(([, v]) => v!)) : null;
      result.portfolioValues.set(`${portfolio}|${date}`, total);
      const weights = new Map<string, number | null>();
      for (const [s, v] of values) {
        const weight = total === null || total === 0 || v === null ? null : v / total;
        weights.set(s, weight);
        result.weights.set(`${portfolio}|${date}|${s}`, { valueBase: v, weight, priceStale: priceStale(s, k) });
      }
      if (previous && previous.k === k - 1) {
        let simple = 0;
        let covered: number | null = null;
        let complete = true;
        for (const [s, w] of previous.weights) {
          const r = isBaseCash(s) ? 0 : (() => {
            const now = priceBase(s, k);
            const before = priceBase(s, k - 1);
            return now === null || before === null ? null : now / before - 1;
          })();
          if (w === null || r === null) {
            complete = false;
          } else {
            simple += w * r;
            covered = (covered ?? 0) + w;
          }
        }
        result.portfolioReturns.set(`${portfolio}|${date}`, { simpleReturn: complete ? simple : null, coveredWeight: covered });
      }
      previous = { k, weights };
    }
  }
  return result;
}
