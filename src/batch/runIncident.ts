import { insertAlert } from '../alerts/outbox.ts';
import type { Database } from '../storage/database.ts';
import type { RunWriter } from './runWriters.ts';

/**
 * Failed runs as one episode, the way a limit breach is one: it opens with the first
 * run that fails (or is interrupted by the process ending) after a finished one and closes with the next run that finishes. Each
 * state change is one `run_failed` alert keyed by the episode's first failed run, so a
 * failure that repeats batch after batch is told once, and operations also learn when
 * figures are current again.
 */

/** The first failed run since the last finished one: the episode's key; null when runs are not failing. */
async function failingSince(db: Database): Promise<number | null> {
  const [{ first }] = await db.all<{ first: number | null }>(
    `select min(run_id) as first from risk_runs
     where status in ('failed', 'interrupted') and run_id > coalesce((select max(run_id) from risk_runs where status = 'done'), 0)`,
  );
  return first;
}

export interface FailedRun {
  runId: number;
  trigger: string;
  from: string | null;
  portfolios: readonly string[] | null;
  /** The error on one line. */
  error: string;
  /** How the run ended: with an error, or with the process that ran it. */
  ended: 'failed' | 'interrupted';
}

/** Inside the transaction that marks `run` failed: opens the episode, unless this run continues an open one. */
export async function openRunFailure(tx: Database, run: FailedRun): Promise<void> {
  const first = await failingSince(tx);
  if (first !== run.runId) return;
  await insertEpisodeAlert(tx, first, 'open', run.runId, {
    trigger: run.trigger,
    from_date: run.from,
    portfolios: run.portfolios,
    error: run.error,
    ended: run.ended,
    text: `run ${run.runId} (${run.trigger}) ${run.ended}, risk figures are not up to date: ${run.error}`,
  });
}

/** A run writer: a run that finishes after failed ones closes their episode. */
export const closeRunFailure: RunWriter = {
  name: 'run_incident',
  write: async (tx, run) => {
    const first = await failingSince(tx);
    if (first === null) return;
    const raised = await insertEpisodeAlert(tx, first, 'closed', run.runId, {
      failing_since_run: first,
      text: `run ${run.runId} (${run.trigger}) finished: risk figures are up to date again after the runs failing since run ${first}`,
    });
    if (raised) run.alertsRaised++;
  },
};

/** One state change of the episode that began with run `first`; false if it was already written. */
function insertEpisodeAlert(
  tx: Database,
  first: number,
  state: 'open' | 'closed',
  runId: number,
  facts: Record<string, unknown> & { text: string },
): Promise<boolean> {
  return insertAlert(tx, {
    alertId: `run-failed-${first}-${state}`,
    kind: 'run_failed',
    portfolioId: null,
    asOf: null,
    runId,
    payload: { level: 'breach', episode_state: state, run_id: runId, ...facts },
  });
}
