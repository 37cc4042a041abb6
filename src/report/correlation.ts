import { correlation, Matrix } from 'ml-matrix';

export interface ReturnObservation {
  security_id: string;
  date_index: number;
  log_return: number | null;
}

export interface CorrelationResult {
  ids: string[];
  /** values[i][j]; NaN where a security's returns do not vary in the window. */
  values: number[][];
  /** Dates with a return for every security (the rows the estimate rests on). */
  observations: number;
}

/**
 * Pearson correlation of daily log returns over the dates on which every listed security
 * has a return (listwise: each pair rests on the same dates, so the matrix stays a
 * valid correlation matrix). Needs at least 3 such dates.
 */
export function correlationOfReturns(ids: readonly string[], rows: readonly ReturnObservation[]): CorrelationResult {
  if (ids.length === 0) return { ids: [], values: [], observations: 0 };
  const column = new Map(ids.map((id, j) => [id, j]));
  const byDate = new Map<number, (number | null)[]>();
  for (const r of rows) {
    const j = column.get(r.security_id);
    if (j === undefined) continue;
    const line = byDate.get(r.date_index) ?? ids.map(() => null);
    line[j] = r.log_return;
    byDate.set(r.date_index, line);
  }
  const complete = [...byDate.entries()]
    .sort(([a], [b]) => a - b)
    .map(([, line]) => line)
    .filter((line): line is number[] => line.every((v) => v !== null && Number.isFinite(v)));
  if (complete.length < 3) {
    throw new Error(`correlationOfReturns: ${complete.length} dates have a return for all ${ids.length} securities; at least 3 are needed`);
  }
  const c = correlation(new Matrix(complete));
  const values = c.to2DArray().map((row, i) => row.map((v, j) => (Number.isFinite(v) ? (i === j ? 1 : v) : Number.NaN)));
  return { ids: [...ids], values, observations: complete.length };
}
