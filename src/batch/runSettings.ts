import type { Config, ResolvedLimit } from '../config/load.ts';
import { readableNumber } from '../cli/format.ts';
import { limitKey } from '../limits/applicableLimits.ts';
import type { Database } from '../storage/database.ts';

/**
 * The settings that shape stored results, keyed by their config path, in a fixed order
 * (the JSON text is compared as recorded). Settings that only steer the worker
 * (folders, watch, alerts, schedules) are not here: changing them leaves results valid.
 */
export type ResultSettings = Record<string, string | number | boolean | number[] | string[]>;

export function resultSettings(config: Config): ResultSettings {
  const { risk } = config;
  // recorded only when set, so results made before benchmarks existed stay current
  const mapped = Object.entries(config.benchmarks).sort(([a], [b]) => (a < b ? -1 : a > b ? 1 : 0));
  const benchmarks: ResultSettings = mapped.length > 0 ? { benchmarks: mapped.map(([portfolio, benchmark]) => `${portfolio}=${benchmark}`).join(',') } : {};
  // the limits shape limit_breaches (which series is watched, at which levels its episodes
  // open, escalate and close); recorded only when set, as the benchmarks. alerts.maxAgeDays
  // only decides which transitions alert, so it is not here
  const limits: ResultSettings = config.limits.length > 0 ? { limits: config.limits.map(limitSetting).sort() } : {};
  return {
    baseCurrency: config.baseCurrency,
    // as the risk stage uses them: each window once, ascending
    'risk.windows': [...new Set(risk.windows)].sort((a, b) => a - b),
    'risk.tradingDaysPerYear': risk.tradingDaysPerYear,
    'risk.maxStaleDays': risk.maxStaleDays,
    'risk.weights': risk.weights,
    'risk.minCoverage': risk.minCoverage,
    'risk.contributions': risk.contributions,
    'risk.ewma.enabled': risk.ewma.enabled,
    'risk.ewma.lambda': risk.ewma.lambda,
    'risk.ewma.seedDays': risk.ewma.seedDays,
    'risk.shrunk.windows': [...new Set(risk.shrunk.windows)].sort((a, b) => a - b),
    // the loss stage's lookbacks shape var_daily and var_backtest (the stress rows are rewritten by every run)
    'risk.historical.days': [...new Set(risk.historical.days)].sort((a, b) => a - b),
    ...benchmarks,
    ...limits,
  };
}

/** "*|vol_ex_ante||63|sample=0.15/0.135/0.1275": the portfolio and the series watched, then limit/warning/clear (defaults resolved). */
function limitSetting(limit: ResolvedLimit): string {
  return `${limit.portfolio}|${limitKey(limit)}=${limit.limit}/${limit.warning}/${limit.clear}`;
}

/** One setting whose recorded value differs from the current one; `before` undefined: not recorded. */
export interface SettingChange {
  setting: string;
  before: unknown;
  after: unknown;
}

/**
 * What differs between the settings of the stored results (the last finished run) and
 * `current`; empty when nothing is stored yet or nothing changed. Results recorded
 * before settings were kept count as unknown: every setting is reported as changed.
 */
export async function changedSettings(db: Database, current: ResultSettings): Promise<SettingChange[]> {
  const [last] = await db.all<{ settings: string | null }>(
    `select settings::varchar as settings from risk_runs where status = 'done' order by run_id desc limit 1`,
  );
  if (last === undefined) return [];
  const recorded = last.settings === null ? {} : (JSON.parse(last.settings) as Record<string, unknown>);
  return Object.entries(current)
    .filter(([key, value]) => JSON.stringify(recorded[key]) !== JSON.stringify(value))
    .map(([setting, after]) => ({ setting, before: recorded[setting], after }));
}

/** "setting risk.ewma.lambda changed 0.94 -> 0.97: recomputing full history" */
export function describeChange(change: SettingChange): string {
  return `setting ${change.setting} changed ${shown(change.setting, change.before)} -> ${shown(change.setting, change.after)}: recomputing full history`;
}

// numbers are shown rounded, never recorded rounded: the recorded text decides what changed
function shown(setting: string, value: unknown): string {
  if (value === undefined) return '(not recorded)';
  const items = Array.isArray(value) ? value : [value];
  return items.map((item) => (setting === 'limits' ? shownLimitSetting(String(item)) : shownValue(item))).join(',');
}

function shownValue(value: unknown): string {
  return typeof value === 'number' ? readableNumber(value) : String(value);
}

/** limitSetting's "*|vol_ex_ante||63|sample=0.1/0.09000000000000001/0.085" as "...=0.1/0.09/0.085" (a default warning is 0.9 x limit). */
function shownLimitSetting(setting: string): string {
  const at = setting.lastIndexOf('=');
  if (at < 0) return setting;
  const levels = setting.slice(at + 1).split('/').map((level) => (Number.isFinite(Number(level)) ? readableNumber(Number(level)) : level));
  return `${setting.slice(0, at + 1)}${levels.join('/')}`;
}
