import type { Database } from '../storage/database.ts';

/** One day's split of the change in the focus window's ex-ante volatility (a vol_change row). */
export interface VolChangePoint {
  date: string;
  prev_date: string;
  vol_prev: number | null;
  vol_now: number | null;
  from_weights: number | null;
  from_market: number | null;
  status: string;
  weights_driver_security_id: string | null;
  weights_driver_change: number | null;
}

/** One holding's part of the weights part on the latest date. */
export interface VolChangeHolding {
  security_id: string;
  name: string | null;
  weight_prev: number;
  weight_now: number;
  from_weights: number;
}

export interface VolChangeReport {
  window: number;
  points: VolChangePoint[];
  /** The row of the report's date, if there is one. */
  latest: VolChangePoint | null;
  /** The weights part per holding on the latest date (kept for the latest date at least). */
  holdings: VolChangeHolding[];
}

/** vol_change of the sample estimate of `window` over the charts' dates, and its split per holding on `asOf`. */
export async function loadVolChange(db: Database, portfolioId: string, window: number, chartFrom: string, asOf: string): Promise<VolChangeReport> {
  const points = await db.all<VolChangePoint>(
    `select date::varchar as date, prev_date::varchar as prev_date, vol_prev, vol_now, from_weights, from_market, status,
            weights_driver_security_id, weights_driver_change
     from vol_change where portfolio_id = $1 and window_days = $2 and estimator = 'sample' and date >= $3::date and date <= $4::date
     order by date`,
    [portfolioId, window, chartFrom, asOf],
  );
  const holdings = await db.all<VolChangeHolding>(
    `select v.security_id, s.name, v.weight_prev, v.weight_now, v.from_weights
     from vol_change_securities v left join clean_securities s using (security_id)
     where v.portfolio_id = $1 and v.window_days = $2 and v.estimator = 'sample' and v.date = $3::date
     order by abs(v.from_weights) desc, v.security_id`,
    [portfolioId, window, asOf],
  );
  const last = points[points.length - 1];
  return { window, points, latest: last?.date === asOf ? last : null, holdings };
}
