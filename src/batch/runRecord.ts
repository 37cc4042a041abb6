import type { Database } from '../storage/database.ts';
import { openRunFailure } from './runIncident.ts';

/**
 * The risk_runs row of a run: written `running` before any work, marked `done` inside
 * the run's write transaction (so a run is done exactly when its results are
 * committed), or `failed` with the error after a rollback, or `interrupted` when the
 * process ended during it.
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

/**
 * After the rollback: the run marked failed and, in the same transaction, the failure
 * episode opened (runIncident.ts), so operations are told through the same channels as
 * a breach, not only by a log line.
 */
export async function recordRunFailure(db: Database, run: RunStart & { runId: number }, err: unknown): Promise<void> {
  const error = oneLine(err);
  await db.transaction(async () => {
    await db.run(`update risk_runs set status = 'failed', finished_at = now(), error = $2 where run_id = $1`, [run.runId, error]);
    await openRunFailure(db, { ...run, error, ended: 'failed' });
  });
}

/**
 * Runs still `running` are marked `interrupted`; returns their ids. Only one process
 * writes the database (DuckDB's lock) and its batches run one at a time, so a run
 * `running` when a batch starts was left by a process that ended during it. An
 * interrupted run is an incident like a failed one: the same episode opens (or goes on).
 */
export async function markInterruptedRuns(db: Database): Promise<number[]> {
  const error = 'the process ended during the run';
  return db.transaction(async () => {
    const rows = await db.all<{ run_id: number; trigger: string; from_date: string | null; portfolios: string | null }>(
      `update risk_runs set status = 'interrupted', finished_at = now(), error = $1
       where status = 'running' returning run_id, trigger, from_date::varchar as from_date, to_json(portfolios)::varchar as portfolios`,
      [error],
    );
    const runs = rows.sort((a, b) => a.run_id - b.run_id);
    for (const r of runs) {
      const portfolios = r.portfolios === null ? null : (JSON.parse(r.portfolios) as string[]);
      await openRunFailure(db, { runId: r.run_id, trigger: r.trigger, from: r.from_date, portfolios, error, ended: 'interrupted' });
    }
    return runs.map((r) => r.run_id);
  });
}

/** The error's message (and its cause's) on one line: it goes into a table cell, an alert and a status line. */
export function oneLine(err: unknown): string {
  const message = err instanceof Error ? err.message : String(err);
  const cause = err instanceof Error && err.cause instanceof Error ? `: ${err.cause.message}` : '';
  return `${message}${cause}`.replace(/\s*[\r\n]+\s*/g, ' ').trim();
}
