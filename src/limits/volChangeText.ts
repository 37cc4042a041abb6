import type { ResolvedLimit } from '../config/load.ts';
import type { Database } from '../storage/database.ts';

/** Why the watched volatility moved since the previous valuation date (a vol_change row). */
export interface VolChangeFacts {
  prev_date: string;
  vol_prev: number;
  vol_now: number;
  from_weights: number;
  from_market: number;
  status: string;
  weights_driver_security_id: string | null;
  weights_driver_change: number | null;
}

/** The vol_change row behind a vol_ex_ante limit on that date; null for other metrics or without a split. */
export async function volChangeOn(db: Database, portfolioId: string, limit: ResolvedLimit, date: string): Promise<VolChangeFacts | null> {
  if (limit.metric !== 'vol_ex_ante') return null;
  const [row] = await db.all<VolChangeFacts>(
    `select prev_date::varchar as prev_date, vol_prev, vol_now, from_weights, from_market, status,
            weights_driver_security_id, weights_driver_change
     from vol_change
     where portfolio_id = $1 and window_days = $2 and estimator = $3 and date = $4::date and from_weights is not null`,
    [portfolioId, limit.window, limit.estimator, date],
  );
  return row ?? null;
}

/**
 * "63-day volatility +3.1 points since 2026-11-30: +2.4 from the market, +0.7 from the
 * weights, mostly EQ-X". A security is named when its part has the sign of the weights
 * part and is at least half of it (common practice, no source: "mostly" means most), and
 * only when the weights part shows as more than 0.0 points: no one drives a change too small to show.
 */
export function volChangeSentence(label: string, c: VolChangeFacts): string {
  const driver = c.weights_driver_change;
  const mostly =
    c.weights_driver_security_id !== null &&
    driver !== null &&
    tenthsOfPoint(c.from_weights) !== 0 &&
    driver * c.from_weights > 0 &&
    Math.abs(driver) >= 0.5 * Math.abs(c.from_weights)
      ? `, mostly ${c.weights_driver_security_id}`
      : '';
  const partial = c.status === 'partial_history' ? ' (holdings with a full history on both dates)' : '';
  return (
    `${label} ${points(c.vol_now - c.vol_prev)} since ${c.prev_date}${partial}: ` +
    `${points(c.from_market)} from the market, ${points(c.from_weights)} from the weights${mostly}`
  );
}

/** A change of an annualized fraction in signed percentage points: 0.031 -> "+3.1 points". */
function points(change: number): string {
  const tenths = tenthsOfPoint(change);
  return `${tenths < 0 ? '-' : '+'}${(Math.abs(tenths) / 10).toFixed(1)} points`;
}

/** A change of an annualized fraction in whole tenths of a percentage point, as the sentence shows it: 0.031 -> 31. */
function tenthsOfPoint(change: number): number {
  return Math.round(change * 1000);
}
