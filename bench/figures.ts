import { median } from './measure.ts';
import type { SizeName } from './scenario.ts';

/** The figures of the benchmark, in the order they are printed. */
export const FIGURE_KEYS = [
  'ingest_rows_per_second',
  'ingest_vs_read_csv',
  'backfill_seconds',
  'new_day_latency_seconds',
  'worker_peak_memory_mib',
  'naive_vs_incremental',
  'riskfold_vs_numpy',
  'history_growth_mib',
] as const;
export type FigureKey = (typeof FIGURE_KEYS)[number];

export interface Goal {
  /** The value must be at least (`min`) or at most (`max`) `value`. */
  kind: 'min' | 'max';
  value: number;
  /** Sizes the goal is set for; elsewhere the figure is shown without a verdict. */
  sizes: readonly SizeName[];
}

export type Verdict = 'met' | 'missed' | 'no_goal' | 'unavailable';

export interface Figure {
  key: FigureKey;
  label: string;
  unit: string;
  /** The median of `runs`; null when the stage could not run. */
  value: number | null;
  runs: number[];
  goal: Goal | null;
  verdict: Verdict;
  /** For a missed goal: how far off, e.g. "23% over: 13.8 s above the goal of 60 s". */
  shortfall: string | null;
  /** Why the figure is missing, or what it includes. */
  note: string | null;
  /** Breakdown that helps find where the time goes. */
  details: Record<string, number | string | null>;
}

// tiny only exercises the harness: its timings are too short to judge
const REAL_SIZES: readonly SizeName[] = ['small', 'medium', 'large'];

export const GOALS: Record<FigureKey, Goal | null> = {
  ingest_rows_per_second: { kind: 'min', value: 1_000_000, sizes: ['large'] },
  ingest_vs_read_csv: { kind: 'max', value: 1.5, sizes: REAL_SIZES },
  backfill_seconds: { kind: 'max', value: 30, sizes: ['large'] },
  new_day_latency_seconds: { kind: 'max', value: 2, sizes: REAL_SIZES },
  worker_peak_memory_mib: { kind: 'max', value: 2048, sizes: REAL_SIZES },
  naive_vs_incremental: null,
  // issue 13: at the medium size, riskfold no slower than the numpy script
  riskfold_vs_numpy: { kind: 'max', value: 1, sizes: ['medium'] },
  history_growth_mib: null,
};

export const LABELS: Record<FigureKey, { label: string; unit: string }> = {
  ingest_rows_per_second: { label: 'Ingest throughput (history files, ingestFile)', unit: 'rows/s' },
  ingest_vs_read_csv: { label: 'Ingest time / plain read_csv into a table', unit: 'x' },
  backfill_seconds: { label: 'Full backfill (recompute, no from)', unit: 's' },
  new_day_latency_seconds: { label: 'One new business day: files land -> risk committed', unit: 's' },
  worker_peak_memory_mib: { label: 'Worker peak resident memory (VmHWM)', unit: 'MiB' },
  naive_vs_incremental: { label: 'Naive backfill time / incremental backfill time', unit: 'x' },
  riskfold_vs_numpy: { label: 'riskfold ingest + backfill time / numpy script time', unit: 'x' },
  history_growth_mib: { label: 'Database growth over a year of daily corrections (history kept)', unit: 'MiB' },
};

/** A measured figure with its goal judged for this size. */
export function figure(
  key: FigureKey,
  size: SizeName,
  runs: number[],
  options: { value?: number; note?: string | null; details?: Figure['details'] } = {},
): Figure {
  const value = options.value ?? median(runs);
  const goal = GOALS[key] && GOALS[key].sizes.includes(size) ? GOALS[key] : null;
  const met = goal === null ? null : goal.kind === 'min' ? value >= goal.value : value <= goal.value;
  return {
    key,
    ...LABELS[key],
    value,
    runs,
    goal,
    verdict: met === null ? 'no_goal' : met ? 'met' : 'missed',
    shortfall: met === false && goal ? shortfallText(goal, value, LABELS[key].unit) : null,
    note: options.note ?? null,
    details: options.details ?? {},
  };
}

/** A figure whose stage could not run (a part not built yet, or a failure), with the reason. */
export function unavailable(key: FigureKey, reason: string): Figure {
  return {
    key,
    ...LABELS[key],
    value: null,
    runs: [],
    goal: GOALS[key],
    verdict: 'unavailable',
    shortfall: null,
    note: reason,
    details: {},
  };
}

function shortfallText(goal: Goal, value: number, unit: string): string {
  const pct = goal.kind === 'max' ? (value / goal.value - 1) * 100 : (1 - value / goal.value) * 100;
  const side = goal.kind === 'max' ? ['over', 'above'] : ['under', 'below'];
  return `${pct.toFixed(0)}% ${side[0]}: ${formatNumber(Math.abs(value - goal.value))} ${unit} ${side[1]} the goal of ${formatNumber(goal.value)} ${unit}`;
}

/** Three significant digits, thousands grouped: 1 234 567 rows/s reads at a glance. */
export function formatNumber(value: number): string {
  if (!Number.isFinite(value)) return String(value);
  const abs = Math.abs(value);
  if (abs >= 1000) return Math.round(value).toLocaleString('en-US');
  return Number(value.toPrecision(3)).toString();
}
