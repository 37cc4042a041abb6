import { round, type MarketPath } from './market.ts';
import { SECURITIES, type DemoAccount } from './universe.ts';

/** A deposit (positive) or withdrawal (negative) of base-currency cash on a date. */
export interface CashFlow {
  date: string;
  portfolioId: string;
  amount: number;
}

/** From `date` on, an account is rebalanced to new targets (that day, then every month). */
export interface TargetChange {
  date: string;
  portfolioId: string;
  targets: Readonly<Record<string, number>>;
}

/** A full snapshot of one account: it holds until the account's next snapshot. */
export interface Snapshot {
  date: string;
  portfolioId: string;
  reason: 'rebalance' | 'new_targets' | 'cash_flow';
  /** Security id (or CASH:<CCY>) -> quantity; absent ids are zero. */
  quantities: ReadonlyMap<string, number>;
}

const CURRENCY_OF = new Map(SECURITIES.map((s) => [s.id, s.currency]));

/** Price of one unit in USD on day t: cash is 1 in its currency, EUR items go through the fx rate. */
export function priceInBase(market: MarketPath, id: string, t: number): number {
  const currency = id.startsWith('CASH:') ? id.slice(5) : CURRENCY_OF.get(id);
  const local = id.startsWith('CASH:') ? 1 : market.prices.get(id)?.[t];
  if (local === undefined || currency === undefined) throw new Error(`demo holds unknown security ${id}`);
  return currency === 'EUR' ? local * market.eurUsd[t] : local;
}

export function valueOf(market: MarketPath, quantities: ReadonlyMap<string, number>, t: number): number {
  let total = 0;
  for (const [id, q] of quantities) total += q * priceInBase(market, id, t);
  return total;
}

/** First trading day of each month, and day 0 (the initial purchase). */
function isRebalanceDay(dates: string[], t: number): boolean {
  return t === 0 || dates[t].slice(0, 7) !== dates[t - 1].slice(0, 7);
}

/**
 * Targets bought at the day's close in whole units; the rounding remainder stays in
 * USD cash, so a rebalance neither creates nor destroys value.
 */
function rebalance(market: MarketPath, targets: Readonly<Record<string, number>>, value: number, t: number): Map<string, number> {
  const out = new Map<string, number>();
  let invested = 0;
  for (const [id, weight] of Object.entries(targets)) {
    if (id === 'CASH:USD') continue;
    const unit = priceInBase(market, id, t);
    const q = id.startsWith('CASH:') ? round((weight * value) / unit, 2) : Math.round((weight * value) / unit);
    out.set(id, q);
    invested += q * unit;
  }
  out.set('CASH:USD', round(value - invested, 2));
  return out;
}

/**
 * Monthly rebalancing to each account's targets (or the new ones of a target change,
 * bought on the day of the change), plus the given cash flows, which sit in USD cash
 * until the next rebalance (so the value jumps while the return does not).
 */
export function simulateHoldings(
  market: MarketPath,
  accounts: readonly DemoAccount[],
  flows: readonly CashFlow[],
  changes: readonly TargetChange[] = [],
): Snapshot[] {
  const snapshots: Snapshot[] = [];
  for (const account of accounts) {
    let quantities = new Map<string, number>();
    let targets = account.targets;
    market.dates.forEach((date, t) => {
      const change = changes.find((c) => c.date === date && c.portfolioId === account.id);
      if (change) targets = change.targets;
      if (change || isRebalanceDay(market.dates, t)) {
        const value = t === 0 ? account.startValue : valueOf(market, quantities, t);
        quantities = rebalance(market, targets, value, t);
        snapshots.push({ date, portfolioId: account.id, reason: change ? 'new_targets' : 'rebalance', quantities });
      }
      for (const flow of flows.filter((f) => f.date === date && f.portfolioId === account.id)) {
        quantities = new Map(quantities);
        const cash = round((quantities.get('CASH:USD') ?? 0) + flow.amount, 2);
        if (cash < 0) throw new Error(`${account.id} cannot withdraw ${-flow.amount} on ${date}: only ${cash - flow.amount} in cash`);
        quantities.set('CASH:USD', cash);
        // one snapshot per account and date: a flow on a rebalance day replaces that day's snapshot
        if (snapshots.at(-1)?.date === date) snapshots.pop();
        snapshots.push({ date, portfolioId: account.id, reason: 'cash_flow', quantities });
      }
    });
  }
  return snapshots.sort((a, b) => a.date.localeCompare(b.date) || a.portfolioId.localeCompare(b.portfolioId));
}

/** The snapshot in force for an account on a date (the latest one on or before it). */
export function holdingsOn(snapshots: readonly Snapshot[], portfolioId: string, date: string): ReadonlyMap<string, number> {
  let found: Snapshot | undefined;
  for (const s of snapshots) {
    if (s.portfolioId === portfolioId && s.date <= date && (!found || s.date >= found.date)) found = s;
  }
  if (!found) throw new Error(`${portfolioId} holds nothing on ${date}`);
  return found.quantities;
}
