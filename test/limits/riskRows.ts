import type { SeriesRow } from '../../src/limits/breachStore.ts';
import type { Breach } from '../../src/report/reportData.ts';
import type { Database } from '../../src/storage/database.ts';

export interface RiskSeries {
  portfolioId: string;
  window?: number;
  estimator?: 'sample' | 'ewma';
  runId?: number;
  /** [date, vol_ex_ante]; null stands for a date with too little history. */
  points: [string, number | null][];
  /** var_99_1d per date as a fraction of value (stored in base currency on a value of 1,000,000). */
  varFraction?: (date: string) => number | null;
}

export const PORTFOLIO_VALUE = 1_000_000;

/**
 * Writes risk_daily rows the way the risk stage does (the rows of a recomputed range are
 * replaced), so limit tests do not depend on the risk stage.
 */
export async function writeRiskSeries(db: Database, s: RiskSeries): Promise<void> {
  const window = s.window ?? 63;
  const estimator = s.estimator ?? 'sample';
  for (const [date, vol] of s.points) {
    await db.run('delete from risk_daily where portfolio_id = $1 and date = $2::date and window_days = $3 and estimator = $4', [
      s.portfolioId,
      date,
      window,
      estimator,
    ]);
    const varFraction = s.varFraction?.(date) ?? null;
    await db.run(
      `insert into risk_daily (portfolio_id, date, window_days, estimator, portfolio_value, vol_ex_ante, vol_realized,
         var_99_1d, coverage, status, run_id)
       values ($1, $2::date, $3, $4, $5, $6, $6, $7, 1, $8, $9)`,
      [
        s.portfolioId,
        date,
        window,
        estimator,
        PORTFOLIO_VALUE,
        vol,
        varFraction === null ? null : varFraction * PORTFOLIO_VALUE,
        vol === null ? 'insufficient_history' : 'ok',
        s.runId ?? 1,
      ],
    );
  }
}

export interface AlertRow {
  alert_id: string;
  kind: string;
  portfolio_id: string | null;
  as_of: string | null;
  payload: string;
  breach_id: number | null;
}

export async function alertRows(db: Database): Promise<(AlertRow & { data: Record<string, unknown> })[]> {
  const rows = await db.all<AlertRow>(
    'select alert_id, kind, portfolio_id, as_of, payload::varchar as payload, breach_id from alerts order by as_of, created_at, alert_id',
  );
  return rows.map((r) => ({ ...r, data: JSON.parse(r.payload) as Record<string, unknown> }));
}

/** A limit_breaches row as the report reads it, less what the series is, with its portfolio. */
export type BreachRow = Omit<Breach, keyof SeriesRow | 'limit_value'> & { portfolio_id: string };

export async function breachRows(db: Database): Promise<BreachRow[]> {
  return db.all<BreachRow>(
    `select breach_id, portfolio_id, level, opened_on, escalated_on, closed_on, peak_value, peak_on, retracted
     from limit_breaches order by portfolio_id, opened_on, breach_id`,
  );
}
