import type { DuckDBBlobValue, DuckDBListValue } from '@duckdb/node-api';
import type { Database } from '../../storage/database.ts';
import { float64Blob, float64sOf } from '../../storage/float64Blob.ts';
import type { EwmaState } from '../estimators/ewma.ts';
import type { StoredState } from '../estimators/estimator.ts';

/**
 * The stored EWMA matrices (table risk_ewma_state): those of the last two valuation
 * dates, so that a new day continues from the day before and so does a run that redoes
 * the last date (a same-day correction). A run may continue from a state only when it
 * sits exactly on the date before the run's first date and was computed with the same
 * lambda and seedDays and the same result settings (the returns depend on the base
 * currency and the stale-price carry too); otherwise the EWMA replays from the first
 * date in memory.
 */

export interface EwmaSettings {
  lambda: number;
  seedDays: number;
}

/** The state to continue from before date row `fromRow`, or null (replay from the start). */
export async function loadEwmaState(
  db: Database,
  settings: EwmaSettings,
  dates: readonly string[],
  fromRow: number,
  recordedWith: string,
): Promise<EwmaState | null> {
  if (fromRow < 1 || fromRow > dates.length) return null;
  const reader = await db.conn.runAndReadAll(
    `select security_ids, matrix from risk_ewma_state
     where as_of = $1::date and decay = $2 and seed_days = $3 and settings::varchar = $4`,
    [dates[fromRow - 1], settings.lambda, settings.seedDays, recordedWith],
  );
  const rows = reader.getRows();
  if (rows.length !== 1) return null;
  const ids = (rows[0][0] as DuckDBListValue).items as string[];
  const k = ids.length;
  const matrix = float64sOf(rows[0][1] as DuckDBBlobValue, k * k, `risk_ewma_state: the matrix of ${k} securities`);
  return { row: fromRow - 1, securityIds: ids, matrix };
}

/** Replaces the stored states (none: EWMA switched off, or no dates left); runs inside the run's write transaction. */
export async function saveEwmaState(
  db: Database,
  settings: EwmaSettings,
  dates: readonly string[],
  states: readonly EwmaState[],
  runId: number,
  recordedWith: string,
): Promise<void> {
  await db.run('delete from risk_ewma_state');
  for (const state of states) {
    // ids as JSON: an empty JS list cannot be bound (DuckDB cannot type a list of nothing)
    await db.run(
      `insert into risk_ewma_state (as_of, decay, seed_days, security_ids, matrix, run_id, settings)
       values ($1::date, $2, $3, from_json($4, '["VARCHAR"]'), $5, $6, $7::json)`,
      [dates[state.row], settings.lambda, settings.seedDays, JSON.stringify(state.securityIds), float64Blob(state.matrix), runId, recordedWith],
    );
  }
}

/** The EWMA estimator's stored state, with its lambda and seedDays from risk.ewma. */
export const ewmaStateStore: StoredState<EwmaState> = {
  load: (db, config, dates, fromRow, settings) => loadEwmaState(db, config.risk.ewma, dates, fromRow, settings),
  save: (db, config, dates, states, runId, settings) => saveEwmaState(db, config.risk.ewma, dates, states, runId, settings),
};
