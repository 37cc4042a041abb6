import { limitKey } from '../limits/applicableLimits.ts';
import { limitLevels, VAR_METHODS, type Estimator, type LimitConfig, type VarMethod } from './schema.ts';

/**
 * One watched series of a limit, levels filled in. `method` is set for backtest_zone only
 * (null otherwise); a historical method's `window` is its scenario days and its
 * `estimator` null, as in var_backtest.
 */
export interface ResolvedLimit extends Omit<Required<LimitConfig>, 'method' | 'estimator'> {
  method: VarMethod | null;
  estimator: Estimator | null;
}

/**
 * The config's limits as watched series, in config order. A backtest_zone limit without
 * a method watches every method: the normal VaR of its window and estimator, and the
 * historical and filtered historical VaR of every scenario count in `historicalDays`.
 * A series a limit only implies is dropped when another limit of the same portfolio
 * entry names it or implied it first, so two such limits never watch one series twice.
 */
export function resolveLimits(limits: readonly LimitConfig[], historicalDays: readonly number[]): ResolvedLimit[] {
  const expanded = limits.flatMap((l) => {
    const levels = limitLevels(l);
    const series = (method: VarMethod | null, window: number, estimator: Estimator | null, implied: boolean) => ({
      limit: { ...l, ...levels, method, window, estimator },
      implied,
    });
    if (l.metric !== 'backtest_zone') return [series(null, l.window, l.estimator, false)];
    if (l.method === 'normal') return [series('normal', l.window, l.estimator, false)];
    if (l.method !== undefined) return [series(l.method, l.window, null, false)];
    const historical = VAR_METHODS.filter((m) => m !== 'normal').flatMap((m) => historicalDays.map((days) => series(m, days, null, true)));
    return [series('normal', l.window, l.estimator, false), ...historical];
  });
  const named = new Set(expanded.filter((e) => !e.implied).map((e) => `${e.limit.portfolio}|${limitKey(e.limit)}`));
  const kept = new Set<string>();
  return expanded.flatMap(({ limit, implied }) => {
    const key = `${limit.portfolio}|${limitKey(limit)}`;
    if (implied && (named.has(key) || kept.has(key))) return [];
    kept.add(key);
    return [limit];
  });
}
