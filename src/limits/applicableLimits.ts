import type { ResolvedLimit } from '../config/load.ts';

/** What a limit watches: one series of risk_daily for one portfolio. */
export function limitKey(limit: Pick<ResolvedLimit, 'metric' | 'window' | 'estimator'>): string {
  return `${limit.metric}|${limit.window}|${limit.estimator}`;
}

/** Whether a metric's levels are counts (a backtest's exceptions), not fractions of value. */
export function isCountMetric(metric: string): boolean {
  return metric === 'backtest_zone';
}

/**
 * The limits that apply to one portfolio: its own entries, plus each `*` entry whose
 * metric, window and estimator it has no own entry for (a specific id overrides `*`).
 */
export function applicableLimits(limits: readonly ResolvedLimit[], portfolioId: string): ResolvedLimit[] {
  const own = limits.filter((l) => l.portfolio === portfolioId);
  const ownKeys = new Set(own.map(limitKey));
  const fromStar = limits.filter((l) => l.portfolio === '*' && !ownKeys.has(limitKey(l)));
  return [...own, ...fromStar];
}
