import type { Database } from '../storage/database.ts';

/**
 * The risk_runs row of a run: written `running` before any work, marked `done` inside
 * the run's write transaction (so a run is done exactly when its results are
 * committed), or `failed` with the error after a rollback.
 */

export interface RunStart {
  trigger: string;
  from: string | null;
  portfolios: readonly string[] | null;
  /** JSON of the settings that shape the results (runSettings.ts). */
  settings: string;
}

/** Records the start of a run; returns its run_id. */
export async function startRun(db: Database, run: RunStart): Promise<number> {
  const [{ run_id: runId }] = await db.all<{ run_id: number }>(
    `insert into risk_runs (trigger, from_date, portfolios, status, settings)
     values ($1, $2::date, from_json($3, '["VARCHAR"]'), 'running', $4::json) returning run_id`,
    [run.trigger, run.from, run.portfolios === null ? null : JSON.stringify(run.portfolios), run.settings],
  );
  return runId;
}

/** Inside the write transaction, after every writer. */
export async function markRunDone(tx: Database, runId: number, riskRows: number): Promise<void> {
  await tx.run(`update risk_runs set status = 'done', finished_at = now(), risk_rows = $2 where run_id = $1`, [runId, riskRows]);
}

/** After the rollback, outside any transaction. */
export async function markRunFailed(db: Database, runId: number, message: string): Promise<void> {
  await db.run(`update risk_runs set status = 'failed', finished_at = now(), error = $2 where run_id = $1`, [runId, message]);
}
