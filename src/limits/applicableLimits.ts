import type { ResolvedLimit } from '../config/load.ts';

/** The fields that name what a limit watches: one series of risk_daily, or of var_backtest by method. */
export type Series = Pick<ResolvedLimit, 'metric' | 'method' | 'window' | 'estimator'>;

/** What a limit watches, for one portfolio: `metric|method|window|estimator` (method and estimator may be empty). */
export function limitKey(limit: Series): string {
  return `${limit.metric}|${limit.method ?? ''}|${limit.window}|${limit.estimator ?? ''}`;
}

/** Whether a metric's levels are counts (a backtest's exceptions), not fractions of value. */
export function isCountMetric(metric: string): boolean {
  return metric === 'backtest_zone';
}

/**
 * The limits that apply to one portfolio: its own entries, plus each `*` entry whose
 * series (metric, method, window, estimator) it has no own entry for (a specific id overrides `*`).
 */
export function applicableLimits(limits: readonly ResolvedLimit[], portfolioId: string): ResolvedLimit[] {
  const own = limits.filter((l) => l.portfolio === portfolioId);
  const ownKeys = new Set(own.map(limitKey));
  const fromStar = limits.filter((l) => l.portfolio === '*' && !ownKeys.has(limitKey(l)));
  return [...own, ...fromStar];
}
