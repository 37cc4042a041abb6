import { worstWindow, type WorstWindow } from '../risk/math/stress.ts';

/** The worst-window lengths, in valuation dates; scenario ids worst_1d, worst_5d, worst_20d. */
export const WORST_WINDOW_DAYS = [1, 5, 20] as const;

/** A portfolio's worst windows up to a date, by length; null: no complete window. */
export type WorstWindows = Map<number, WorstWindow | null>;

/**
 * The worst windows of a portfolio's own returns (`series`, by date row) up to row d.
 * With `before` (the worst windows up to the day before `fromRow`, as stored by an earlier
 * run: the history before the run is unchanged), only the windows ending at `fromRow` or
 * later are searched and the lower of the two kept (the earlier one on a tie, as
 * worstWindow does); without it, the whole series up to d.
 */
export function worstWindowsUpTo(series: Float64Array, d: number, fromRow: number, before: WorstWindows | null): WorstWindows {
  const out: WorstWindows = new Map();
  for (const days of WORST_WINDOW_DAYS) {
    if (before === null || !before.has(days)) {
      out.set(days, worstWindow(series.subarray(0, d + 1), days));
      continue;
    }
    const first = Math.max(0, fromRow - days + 1);
    const found = d + 1 - first >= days ? worstWindow(series.subarray(first, d + 1), days) : null;
    const recent = found === null ? null : { start: found.start + first, return: found.return };
    const stored = before.get(days) ?? null;
    out.set(days, stored !== null && (recent === null || stored.return <= recent.return) ? stored : recent);
  }
  return out;
}

/**
 * The worst windows up to each of the date rows `ends` (each fromRow - 1 or later), each
 * continued from the one before: the first from `before` (the windows up to fromRow - 1,
 * stored by an earlier run), or from the whole series when it is null. By row.
 */
export function worstWindowsAt(series: Float64Array, fromRow: number, ends: readonly number[], before: WorstWindows | null): Map<number, WorstWindows> {
  const out = new Map<number, WorstWindows>();
  let known = before;
  let knownRow = fromRow - 1;
  for (const end of [...new Set(ends)].sort((a, b) => a - b)) {
    if (end < fromRow - 1) throw new Error(`worstWindowsAt: row ${end} is before the run's first row ${fromRow} less one`);
    if (end === knownRow && known !== null) {
      out.set(end, known);
      continue;
    }
    known = worstWindowsUpTo(series, end, knownRow + 1, known);
    knownRow = end;
    out.set(end, known);
  }
  return out;
}
