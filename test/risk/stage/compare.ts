import { expect } from 'vitest';
import type { Database } from '../../../src/storage/database.ts';
import type { ReferenceRow } from './reference.ts';

export const FIGURES = [
  ['portfolio_value', 'portfolioValue'],
  ['vol_ex_ante', 'volExAnte'],
  ['vol_realized', 'volRealized'],
  ['ann_return', 'annReturn'],
  ['var_99_1d', 'var99_1d'],
  ['es_975_1d', 'es975_1d'],
  ['var_99_10d', 'var99_10d'],
  ['es_975_10d', 'es975_10d'],
  ['diversification_ratio', 'diversification'],
  ['coverage', 'coverage'],
] as const;

export type DailyRow = Record<string, number | string | null>;

export async function readDaily(db: Database): Promise<DailyRow[]> {
  return db.all<DailyRow>(
    `select portfolio_id, date, window_days, estimator, ${FIGURES.map(([c]) => c).join(', ')}, status, n_holdings, n_covered, run_id
     from risk_daily order by portfolio_id, date, window_days, estimator`,
  );
}

/** Equal to `relative` of the larger magnitude, or within `absolute`; both null counts as equal. */
export function isClose(actual: number | null, expected: number | null, relative: number, absolute = 1e-300): boolean {
  if (actual === null || expected === null) return actual === expected;
  return Math.abs(actual - expected) <= relative * Math.max(Math.abs(actual), Math.abs(expected)) + absolute;
}

/** Every reference row has its risk_daily row with the same status and every figure within `relative`. */
export function expectMatchesReference(actual: DailyRow[], expected: ReferenceRow[], relative: number): void {
  const key = (p: unknown, d: unknown, w: unknown) => `${p}|${d}|${w}`;
  const byKey = new Map(actual.map((r) => [key(r.portfolio_id, r.date, r.window_days), r]));
  expect(actual.length).toBe(expected.length);
  const mismatches: string[] = [];
  for (const e of expected) {
    const a = byKey.get(key(e.portfolio, e.date, e.windowDays));
    if (!a) {
      mismatches.push(`${key(e.portfolio, e.date, e.windowDays)}: no row`);
      continue;
    }
    if (a.status !== e.status || a.estimator !== e.estimator) mismatches.push(`${key(e.portfolio, e.date, e.windowDays)}: status ${a.status} vs ${e.status}`);
    for (const [column, field] of FIGURES) {
      if (!isClose(a[column] as number | null, e[field], relative)) {
        mismatches.push(`${key(e.portfolio, e.date, e.windowDays)} ${column}: ${a[column]} vs ${e[field]}`);
      }
    }
  }
  expect(mismatches.slice(0, 10)).toEqual([]);
}

/** Two readings of the result tables agree (run_id aside) to `relative`, or within `absolute`. */
export function expectSameRows(actual: DailyRow[], expected: DailyRow[], relative: number, ignore = ['run_id'], absolute = 1e-300): void {
  expect(actual.length).toBe(expected.length);
  const mismatches: string[] = [];
  actual.forEach((a, i) => {
    for (const [column, value] of Object.entries(expected[i])) {
      if (ignore.includes(column)) continue;
      const same = typeof value === 'number' && typeof a[column] === 'number' ? isClose(a[column] as number, value, relative, absolute) : a[column] === value;
      if (!same) mismatches.push(`row ${i} ${JSON.stringify(expected[i]).slice(0, 80)} ${column}: ${a[column]} vs ${value}`);
    }
  });
  expect(mismatches.slice(0, 10)).toEqual([]);
}
