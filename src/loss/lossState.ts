import type { DuckDBBlobValue, DuckDBListValue } from '@duckdb/node-api';
import type { Config } from '../config/load.ts';
import type { ReturnPanel } from '../risk/inputs/panels.ts';
import type { Database } from '../storage/database.ts';
import { float64Blob, float64sOf } from '../storage/float64Blob.ts';
import { WORST_WINDOW_DAYS, type WorstWindows } from './worstWindows.ts';

/**
 * What the loss stage keeps between runs (migration 0220), so that a new day, or a redo
 * of the last date, costs the same whatever the length of the history:
 * - each security's EWMA variance after each of the last L + 1 dates (L the longest
 *   risk.historical.days): the filtered scenarios of a date d read the sigmas of d - L
 *   .. d - 1, and the recursion goes on from the last;
 * - each portfolio's worst windows up to each of the last two dates.
 * A run continues them only from the date before its first one, made with the same
 * settings (lambda, seedDays and the run's result settings: the returns depend on the
 * base currency and the stale-price carry too) and covering every security or portfolio
 * it reads; otherwise the loss stage replays from the first date, as a full run does.
 * The dates before a run's first one are unchanged since the last finished run (a batch
 * recomputes from the earliest date it touched, and after a failed run from that run's),
 * so what that run stored of them is what a replay gives.
 */

/** The state a run leaves, saved by its write step (saveLossState); null parts are left as stored. */
export interface LossState {
  sigma: SigmaRows | null;
  worst: WorstRows | null;
}

/** Variances of rows firstRow .. firstRow + rows - 1, rows x securities. */
export interface SigmaRows {
  firstRow: number;
  /** The valuation date of firstRow. */
  firstDate: string;
  rows: number;
  securityIds: readonly string[];
  variances: Float64Array;
}

export interface WorstRows {
  /** Every portfolio the run read: its stored rows are replaced by those below. */
  portfolioIds: readonly string[];
  /** The dates kept (the last two of the run). */
  asOf: readonly string[];
  rows: { portfolioId: string; asOf: string; days: number; startDate: string | null; windowReturn: number | null }[];
}

/** The rows of the variances (T x N) a run keeps: the last L + 1 dates. */
export function sigmaRowsToKeep(returns: ReturnPanel, variances: Float64Array, config: Config): SigmaRows {
  const t = returns.dates.length;
  const n = returns.securityIds.length;
  const firstRow = Math.max(0, t - 1 - Math.max(...config.risk.historical.days));
  return { firstRow, firstDate: returns.dates[firstRow], rows: t - firstRow, securityIds: returns.securityIds, variances: variances.slice(firstRow * n, t * n) };
}

/**
 * The stored variances laid out as the panel's T x N (NaN elsewhere) for rows
 * max(0, fromRow - L) .. fromRow - 1, or null when the stored ones cannot be continued.
 */
export async function loadSigmaState(db: Database, config: Config, returns: ReturnPanel, fromRow: number, settings: string): Promise<Float64Array | null> {
  const { dates, securityIds } = returns;
  if (fromRow < 1 || fromRow > dates.length) return null;
  const { lambda, seedDays } = config.risk.ewma;
  const reader = await db.conn.runAndReadAll(
    `select first_date::varchar, dates, security_ids, variances from loss_sigma_state
     where decay = $1 and seed_days = $2 and settings::varchar = $3`,
    [lambda, seedDays, settings],
  );
  const found = reader.getRows();
  if (found.length !== 1) return null;
  const [firstDate, rows, ids, blob] = found[0] as [string, number, DuckDBListValue, DuckDBBlobValue];
  const first = dates.indexOf(firstDate);
  const wanted = Math.max(0, fromRow - Math.max(...config.risk.historical.days));
  if (first < 0 || wanted < first || fromRow - 1 > first + rows - 1) return null;
  const stored = new Map((ids.items as string[]).map((id, a) => [id, a]));
  const k = stored.size;
  const kept = float64sOf(blob, rows * k, `loss_sigma_state: ${rows} dates x ${k} securities`);
  const columns = securityIds.map((id) => stored.get(id) ?? -1);
  if (columns.includes(-1)) return null;
  const n = securityIds.length;
  const variances = new Float64Array(dates.length * n).fill(Number.NaN);
  for (let d = wanted; d < fromRow; d++) {
    for (let j = 0; j < n; j++) variances[d * n + j] = kept[(d - first) * k + columns[j]];
  }
  return variances;
}

/**
 * Each portfolio's worst windows up to the date before `fromRow`, by panel index; a
 * portfolio is left out unless every window length is stored for it.
 */
export async function loadWorstState(db: Database, dates: readonly string[], fromRow: number, portfolioIds: readonly string[], settings: string): Promise<Map<number, WorstWindows>> {
  const out = new Map<number, WorstWindows>();
  if (fromRow < 1 || fromRow > dates.length) return out;
  const rows = await db.all<{ portfolio_id: string; window_days: number; start_date: string | null; window_return: number | null }>(
    `select portfolio_id, window_days, start_date::varchar as start_date, window_return from loss_worst_state
     where as_of = $1::date and settings::varchar = $2 and list_contains(from_json($3, '["VARCHAR"]'), portfolio_id)`,
    [dates[fromRow - 1], settings, JSON.stringify(portfolioIds)],
  );
  const rowOf = new Map(dates.slice(0, fromRow).map((date, d) => [date, d]));
  const index = new Map(portfolioIds.map((id, p) => [id, p]));
  const found = new Map<number, WorstWindows>();
  for (const r of rows) {
    const p = index.get(r.portfolio_id)!;
    let windows = found.get(p);
    if (!windows) found.set(p, (windows = new Map()));
    if (r.start_date === null) windows.set(r.window_days, null);
    else if (r.window_return !== null && rowOf.has(r.start_date)) windows.set(r.window_days, { start: rowOf.get(r.start_date)!, return: r.window_return });
  }
  for (const [p, windows] of found) if (WORST_WINDOW_DAYS.every((days) => windows.has(days))) out.set(p, windows);
  return out;
}

/** The rows of worst windows to keep, by portfolio id, from each portfolio's windows up to each kept date row. */
export function worstRowsToKeep(dates: readonly string[], portfolioIds: readonly string[], at: Map<number, Map<number, WorstWindows>>, keep: readonly number[]): WorstRows {
  const rows: WorstRows['rows'] = [];
  for (const [p, byRow] of at) {
    for (const d of keep) {
      for (const [days, w] of byRow.get(d) ?? []) {
        rows.push({ portfolioId: portfolioIds[p], asOf: dates[d], days, startDate: w === null ? null : dates[w.start], windowReturn: w === null ? null : w.return });
      }
    }
  }
  return { portfolioIds, asOf: keep.map((d) => dates[d]), rows };
}

/**
 * Inside the run's write transaction: replaces the stored variances with the run's, and
 * the worst windows of the portfolios it read (a failed portfolio's are dropped: its
 * next run replays), keeping no date older than the run's last two.
 */
export async function saveLossState(
  db: Database,
  config: Config,
  state: LossState,
  run: { runId: number; settings: string; failed: readonly string[] },
): Promise<void> {
  if (state.sigma !== null) {
    const { sigma } = state;
    await db.run('delete from loss_sigma_state');
    // ids as JSON: an empty JS list cannot be bound (DuckDB cannot type a list of nothing)
    await db.run(
      `insert into loss_sigma_state (first_date, dates, decay, seed_days, settings, security_ids, variances, run_id)
       values ($1::date, $2, $3, $4, $5::json, from_json($6, '["VARCHAR"]'), $7, $8)`,
      [
        sigma.firstDate,
        sigma.rows,
        config.risk.ewma.lambda,
        config.risk.ewma.seedDays,
        run.settings,
        JSON.stringify(sigma.securityIds),
        float64Blob(sigma.variances),
        run.runId,
      ],
    );
  }
  if (state.worst !== null) {
    const { worst } = state;
    const failed = new Set(run.failed);
    const kept = worst.rows.filter((r) => !failed.has(r.portfolioId));
    await db.run(
      `delete from loss_worst_state
       where list_contains(from_json($1, '["VARCHAR"]'), portfolio_id) or not list_contains(from_json($2, '["VARCHAR"]'), as_of::varchar)`,
      [JSON.stringify(worst.portfolioIds), JSON.stringify(worst.asOf)],
    );
    if (kept.length === 0) return;
    const rows = kept.map((r) => ({ portfolio_id: r.portfolioId, as_of: r.asOf, window_days: r.days, start_date: r.startDate, window_return: r.windowReturn }));
    const shape = '[{"portfolio_id":"VARCHAR","as_of":"DATE","window_days":"INTEGER","start_date":"DATE","window_return":"DOUBLE"}]';
    await db.run(
      `insert into loss_worst_state by name
       select unnest(from_json($1, '${shape}'), recursive := true), $2::json as settings, $3 as run_id`,
      [JSON.stringify(rows), run.settings, run.runId],
    );
  }
}
