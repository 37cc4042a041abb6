import { requireInteger, requireLength } from './checks.ts';
import { scenarioPnl, type ScenarioPnl } from './historicalSimulation.ts';

/**
 * Stress scenarios: today's holdings under one named move, historical (a range of
 * stored history) or hypothetical (shocks by asset class, currency, security or all).
 * A stress result is what that one move would do; it is not a probability.
 */

export interface StressResult extends ScenarioPnl {
  /** P&L as a share of the portfolio value sum_i V_i; NaN when that value is not positive. */
  pnlPct: number;
}

/**
 * P&L of one stress move given each holding's simple return R_i over the move:
 * pnl = sum_i V_i R_i. A holding whose return is NaN (no data) is left out and named in
 * `missing`, with the coverage of `scenarioPnl`; it is never treated as unchanged.
 */
export function stressPnl(values: Float64Array, simpleReturns: Float64Array): StressResult {
  const fn = 'stressPnl';
  requireLength(fn, 'simpleReturns', simpleReturns.length, values.length);
  const logReturns = new Float64Array(values.length);
  for (let i = 0; i < values.length; i++) {
    if (simpleReturns[i] < -1) throw new Error(`${fn}: simpleReturns[${i}] = ${simpleReturns[i]} is below -100%`);
    // ln(1 + R): exp of it minus 1 gives R back in scenarioPnl; -100% becomes -Infinity, a total loss
    logReturns[i] = Math.log1p(simpleReturns[i]);
  }
  const result = scenarioPnl(values, logReturns, 1);
  let value = 0;
  for (let i = 0; i < values.length; i++) value += values[i];
  return { ...result, pnlPct: value > 0 ? result.pnl[0] / value : Number.NaN };
}

/**
 * Each security's compounded return over a range of stored history,
 * R_i = prod_t exp(r_i,t) - 1 = exp(sum_t r_i,t) - 1, from `rows` dates of log returns
 * (row-major, r[t * n + i]). A missing return (NaN) anywhere in the range makes R_i NaN,
 * so `stressPnl` flags the security instead of treating it as unchanged.
 */
export function compoundedReturns(logReturns: Float64Array, rows: number, n: number): Float64Array {
  const fn = 'compoundedReturns';
  requireInteger(fn, 'rows', rows, 1);
  requireInteger(fn, 'n', n, 1);
  requireLength(fn, 'logReturns', logReturns.length, rows * n);
  const sums = new Float64Array(n);
  for (let t = 0; t < rows; t++) for (let i = 0; i < n; i++) sums[i] += logReturns[t * n + i];
  for (let i = 0; i < n; i++) sums[i] = Math.expm1(sums[i]);
  return sums;
}

export interface WorstWindow {
  /** Index of the window's first return in the series. */
  start: number;
  /** Its compounded simple return exp(sum r) - 1 (negative for a loss). */
  return: number;
}

/**
 * The `days`-return window with the lowest sum of log returns in a portfolio's own
 * series (the worst 1-, 5-, 20-day moves of its stored history), by a running sum in
 * O(length). Windows that hold a missing return (NaN) are skipped; null when no window
 * is complete. Ties keep the earliest window.
 */
export function worstWindow(logReturns: Float64Array, days: number): WorstWindow | null {
  requireInteger('worstWindow', 'days', days, 1);
  let best: WorstWindow | null = null;
  let bestSum = Infinity;
  let sum = 0;
  let gaps = 0;
  for (let t = 0; t < logReturns.length; t++) {
    if (Number.isNaN(logReturns[t])) gaps++;
    else sum += logReturns[t];
    if (t >= days) {
      const leaving = logReturns[t - days];
      if (Number.isNaN(leaving)) gaps--;
      else sum -= leaving;
    }
    if (t >= days - 1 && gaps === 0 && sum < bestSum) {
      bestSum = sum;
      best = { start: t - days + 1, return: 0 };
    }
  }
  if (best === null) return null;
  // the window's own sum, so rounding left in the running sum does not reach the result
  let exact = 0;
  for (let t = best.start; t < best.start + days; t++) exact += logReturns[t];
  return { start: best.start, return: Math.expm1(exact) };
}

/** What a hypothetical shock matches, and the simple return it applies. */
export type Shock =
  | { all: true; return: number }
  | { assetClass: string; return: number }
  | { currency: string; return: number }
  | { security: string; return: number };

export interface StressHolding {
  security: string;
  /** null for a security without reference data: only `all` and its own id and currency match it. */
  assetClass: string | null;
  /** ISO 4217 code of the holding's currency. */
  currency: string;
  /** Cash has no price to shock: only its currency moves it. */
  isCash: boolean;
}

/**
 * Each holding's simple return in base currency under hypothetical shocks, combined as
 * value_base = quantity x price x fx is: R = (1 + R_price)(1 + R_fx) - 1, where
 * - R_price is the most specific price shock that matches: security, else asset class,
 *   else all (so "all -10%, one class -30%" gives that class -30%, not -37%); cash has none;
 * - R_fx is the shock of the holding's currency (the base currency's value in base
 *   cannot move, so a shock naming it throws), for cash and securities alike.
 * A holding no shock matches is unchanged (0): that is the scenario, not missing data.
 * Throws for two shocks on the same target and for a return below -100%.
 */
export function hypotheticalReturns(holdings: readonly StressHolding[], shocks: readonly Shock[], baseCurrency: string): Float64Array {
  const fn = 'hypotheticalReturns';
  const byKey = new Map<string, number>();
  for (const [index, shock] of shocks.entries()) {
    if (!(shock.return >= -1) || !Number.isFinite(shock.return)) {
      throw new Error(`${fn}: shocks[${index}].return must be a finite number >= -1, got ${shock.return}`);
    }
    const key = shockKey(shock);
    if (byKey.has(key)) throw new Error(`${fn}: shocks[${index}] repeats the shock on ${key}`);
    if ('currency' in shock && shock.currency === baseCurrency) {
      throw new Error(`${fn}: shocks[${index}] shocks the base currency ${baseCurrency}, which cannot move against itself`);
    }
    byKey.set(key, shock.return);
  }
  const out = new Float64Array(holdings.length);
  for (const [i, holding] of holdings.entries()) {
    const price = holding.isCash
      ? 0
      : (byKey.get(`security ${holding.security}`) ??
        (holding.assetClass === null ? undefined : byKey.get(`assetClass ${holding.assetClass}`)) ??
        byKey.get('all') ??
        0);
    const fx = byKey.get(`currency ${holding.currency}`) ?? 0;
    out[i] = (1 + price) * (1 + fx) - 1;
  }
  return out;
}

function shockKey(shock: Shock): string {
  if ('security' in shock) return `security ${shock.security}`;
  if ('assetClass' in shock) return `assetClass ${shock.assetClass}`;
  if ('currency' in shock) return `currency ${shock.currency}`;
  return 'all';
}
