import { portfolioVolatility } from '../risk/math/contributions.ts';
import { covarianceTimesWeights } from '../risk/math/covariance.ts';
import type { Database } from '../storage/database.ts';

/**
 * How much of a portfolio's volatility comes from currency: the ex-ante volatility
 * sqrt(A w'Sw) of the date's weights over a window's sample covariance, once of the
 * base-currency log returns (the full figure, as risk_daily) and once of the local-
 * currency ones (every fx return set to zero: foreign cash then does not move). Holdings
 * without a return on every date of the window are left out of both; `coverage` is the
 * share of gross weight kept.
 */

export interface CurrencySplit {
  window: number;
  full: number | null;
  withoutFx: number | null;
  coverage: number;
}

export async function loadCurrencySplits(
  db: Database,
  portfolioId: string,
  asOf: string,
  windows: readonly number[],
  periodsPerYear: number,
): Promise<CurrencySplit[]> {
  const held = await db.all<{ security_id: string; weight: number; riskless: boolean }>(
    `select w.security_id, w.weight, is_cash_in(w.security_id, s.base_currency) as riskless
     from value_weights w cross join pipeline_settings s
     where w.portfolio_id = $1 and w.date = $2 and w.weight is not null order by w.security_id`,
    [portfolioId, asOf],
  );
  const longest = Math.max(...windows);
  const rows = await db.all<{ security_id: string; back: number; log_return: number | null; log_return_local: number | null }>(
    `with last_index as (select date_index from align_valuation_dates where date = $2)
     select r.security_id, (l.date_index - r.date_index)::integer as back, r.log_return, r.log_return_local
     from ret_securities r, last_index l
     where r.date_index > l.date_index - $3 and r.date_index <= l.date_index
       and r.security_id in (select security_id from value_weights where portfolio_id = $1 and date = $2)`,
    [portfolioId, asOf, longest],
  );
  const series = new Map<string, { base: Float64Array; local: Float64Array }>();
  for (const h of held) {
    // base-currency cash has no return rows: it never moves
    const fill = h.riskless ? 0 : Number.NaN;
    series.set(h.security_id, { base: new Float64Array(longest).fill(fill), local: new Float64Array(longest).fill(fill) });
  }
  for (const r of rows) {
    const s = series.get(r.security_id);
    if (!s) continue;
    s.base[r.back] = r.log_return ?? Number.NaN;
    s.local[r.back] = r.log_return_local ?? Number.NaN;
  }
  return windows.map((window) => {
    const kept = held.filter((h) => {
      const s = series.get(h.security_id)!;
      for (let b = 0; b < window; b++) if (!Number.isFinite(s.base[b]) || !Number.isFinite(s.local[b])) return false;
      return true;
    });
    const gross = held.reduce((sum, h) => sum + Math.abs(h.weight), 0);
    const coverage = gross > 0 ? kept.reduce((sum, h) => sum + Math.abs(h.weight), 0) / gross : 0;
    if (kept.length === 0) return { window, full: null, withoutFx: null, coverage };
    const w = Float64Array.from(kept, (h) => h.weight);
    const vol = (pick: 'base' | 'local') => {
      const x = new Float64Array(window * kept.length);
      kept.forEach((h, a) => {
        const s = series.get(h.security_id)![pick];
        for (let b = 0; b < window; b++) x[b * kept.length + a] = s[b];
      });
      return portfolioVolatility(covarianceTimesWeights(x, window, kept.length, w).sw, w, periodsPerYear);
    };
    return { window, full: vol('base'), withoutFx: vol('local'), coverage };
  });
}
