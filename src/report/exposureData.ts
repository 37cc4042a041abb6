import type { Database } from '../storage/database.ts';

/** What the portfolio is exposed to on the report's date, and how it stands against its benchmark. */
export interface ExposureData {
  buckets: { dimension: 'asset_class' | 'currency'; bucket: string; value_base: number | null; weight: number | null }[];
  concentration: { largest_10_weight: number | null; effective_holdings: number | null; n_positions: number } | null;
  /** Null when no benchmark is set for the portfolio on that date. */
  benchmark: {
    id: string;
    byWindow: { window_days: number; estimator: string; tracking_error_ex_ante: number | null; tracking_error_realized: number | null; beta_to_benchmark: number | null }[];
    /** Active contributions of the focus window (sample), largest share of the tracking error first. */
    contributions: { date: string | null; rows: { security_id: string; weight: number; benchmark_weight: number; active_weight: number; pct: number | null }[] };
  } | null;
}

const ACTIVE_ROWS = 10;

export async function loadExposure(db: Database, portfolioId: string, asOf: string, focusWindow: number): Promise<ExposureData> {
  const buckets = await db.all<ExposureData['buckets'][number]>(
    `select dimension, bucket, value_base, weight from exposure_daily
     where portfolio_id = $1 and date = $2 order by dimension, weight desc nulls last, bucket`,
    [portfolioId, asOf],
  );
  const [concentration = null] = await db.all<NonNullable<ExposureData['concentration']>>(
    'select largest_10_weight, effective_holdings, n_positions from exposure_concentration where portfolio_id = $1 and date = $2',
    [portfolioId, asOf],
  );
  const byWindow = await db.all<NonNullable<ExposureData['benchmark']>['byWindow'][number] & { benchmark_id: string }>(
    `select benchmark_id, window_days, estimator, tracking_error_ex_ante, tracking_error_realized, beta_to_benchmark from risk_daily
     where portfolio_id = $1 and date = $2 and benchmark_id is not null order by estimator desc, window_days`,
    [portfolioId, asOf],
  );
  if (byWindow.length === 0) return { buckets, concentration, benchmark: null };
  const rows = await db.all<NonNullable<ExposureData['benchmark']>['contributions']['rows'][number] & { date: string }>(
    `with latest as (
       select max(date) as date from risk_active_contributions
       where portfolio_id = $1 and window_days = $2 and estimator = 'sample'
     )
     select c.date, c.security_id, c.weight, c.benchmark_weight, c.active_weight, c.pct
     from risk_active_contributions c join latest using (date)
     where c.portfolio_id = $1 and c.window_days = $2 and c.estimator = 'sample'
     order by abs(c.pct) desc nulls last, c.security_id limit ${ACTIVE_ROWS}`,
    [portfolioId, focusWindow],
  );
  return {
    buckets,
    concentration,
    benchmark: {
      id: byWindow[0].benchmark_id,
      byWindow: byWindow.map(({ benchmark_id: _, ...r }) => r),
      contributions: { date: rows[0]?.date ?? null, rows: rows.map(({ date: _, ...r }) => r) },
    },
  };
}
