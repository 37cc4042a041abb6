import type { Series } from './limits/applicableLimits.ts';

/**
 * How every output (report, firm page, status, alerts) names an estimate, a VaR method
 * and a watched figure, so one figure reads the same wherever it appears.
 */

/** An estimate: "EWMA", "63-day" (sample covariance), "63-day shrunk". */
export function estimateLabel(estimator: string | null, windowDays: number): string {
  if (estimator === 'ewma') return 'EWMA';
  return `${windowDays}-day${estimator === 'shrunk' ? ' shrunk' : ''}`;
}

const METHOD_NAMES: Record<string, string> = { normal: 'normal', historical: 'historical', filtered_historical: 'filtered historical' };

/** A VaR of var_daily or var_backtest: "normal, 63-day", "normal, EWMA", "historical, 250 scenarios". */
export function varMethodLabel(r: { method: string; window_days: number; estimator: string | null }): string {
  const method = METHOD_NAMES[r.method] ?? r.method;
  if (r.method !== 'normal') return `${method}, ${r.window_days} scenarios`;
  return `${method}, ${estimateLabel(r.estimator, r.window_days)}`;
}

/**
 * A limit's figure: "63-day volatility", "EWMA realized volatility", "63-day 99% 1-day VaR
 * (of value)", "63-day tracking error", "99% VaR backtest (historical, 250 scenarios)".
 */
export function seriesLabel(s: Series): string {
  if (s.metric === 'backtest_zone') return `99% VaR backtest (${varMethodLabel({ method: s.method ?? 'normal', window_days: s.window, estimator: s.estimator })})`;
  const span = estimateLabel(s.estimator, s.window);
  if (s.metric === 'vol_realized') return `${span} realized volatility`;
  if (s.metric === 'var_99_1d') return `${span} 99% 1-day VaR (of value)`;
  if (s.metric === 'tracking_error_ex_ante') return `${span} tracking error`;
  return `${span} volatility`;
}

/** A backtest's count: "1 exception", "5 exceptions". */
export function exceptionsLabel(count: number): string {
  return `${count} ${count === 1 ? 'exception' : 'exceptions'}`;
}
