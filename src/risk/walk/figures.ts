/**
 * The named figures of each result row, in column order: the walk fills them by name,
 * the batches carry them as one typed-array column each, staging names its columns
 * from them. A new figure is one name here (and its table column in a migration).
 */

/** risk_daily's figures (NaN = NULL). */
export const DAILY_FIGURES = [
  'portfolio_value',
  'vol_ex_ante',
  'vol_realized',
  'ann_return',
  'var_99_1d',
  'es_975_1d',
  'var_99_10d',
  'es_975_10d',
  'diversification_ratio',
  'coverage',
  'tracking_error_ex_ante',
  'tracking_error_realized',
  'beta_to_benchmark',
  'shrinkage_intensity',
] as const;

/** risk_contributions' values. */
export const CONTRIBUTION_VALUES = ['weight', 'mcr', 'ccr', 'pct'] as const;

/** risk_active_contributions' values (active_weight is derived when written). */
export const ACTIVE_VALUES = ['weight', 'benchmark_weight', 'mcr', 'ccr', 'pct'] as const;

/** vol_change's figures: the last one is the weights part of its driver. */
export const VOL_CHANGE_FIGURES = ['vol_prev', 'vol_now', 'from_weights', 'from_market', 'weights_driver_change'] as const;

/** vol_change_securities' values. */
export const VOL_CHANGE_SECURITY_VALUES = ['weight_prev', 'weight_now', 'from_weights'] as const;

/** Position of each name in its list. */
export function positions<Names extends readonly string[]>(names: Names): Readonly<Record<Names[number], number>> {
  return Object.fromEntries(names.map((name, i) => [name, i])) as Record<Names[number], number>;
}
