import type { Logger } from 'pino';
import type { Config } from '../config/load.ts';
import { HOLD_BEFORE, KEEP_REPLACED, PRUNE_HISTORY } from '../history/historyWriters.ts';
import { checkLimits } from '../limits/checkLimits.ts';
import type { ComputedRisk, RiskScope } from '../risk/computeRun.ts';
import { saveEwmaState } from '../risk/ewmaState.ts';
import { replaceResults } from '../risk/staging.ts';
import type { Database } from '../storage/database.ts';
import { closeRunFailure } from './runIncident.ts';

/** What a writer knows about the run whose results it commits. */
export interface RunContext extends RiskScope {
  trigger: string;
  config: Config;
  log: Logger;
  /** The computed run: staged rows, dates, EWMA states. */
  risk: ComputedRisk;
  /** Alerts written to the outbox so far in this transaction; a writer that raises alerts adds its count. */
  alertsRaised: number;
}

/**
 * One part of a run's write step. Every writer runs, in list order, inside the run's ONE
 * transaction (`tx` is the database with that transaction open: begin and commit
 * nothing), so all of a run's results, checks and alerts commit together or not at all.
 * The name is the phase name in the run's log record.
 */
export interface RunWriter {
  name: string;
  write(tx: Database, run: RunContext): Promise<void>;
}

/**
 * The write step of every run: the rows it may replace held aside, risk rows, then the
 * estimator state, then limits (which read the new rows) and their alerts, then the
 * replaced rows kept as history (and old history pruned), then the close of a failure episode.
 */
export const RUN_WRITERS: readonly RunWriter[] = [
  HOLD_BEFORE,
  {
    name: 'write',
    write: (tx, run) =>
      replaceResults(tx, { runId: run.runId, from: run.from, portfolios: run.portfolios, contributions: run.config.risk.contributions }),
  },
  {
    name: 'save_ewma_state',
    write: (tx, run) => saveEwmaState(tx, run.config.risk.ewma, run.risk.dates, run.risk.ewmaStates, run.runId, run.settings),
  },
  {
    name: 'limits',
    write: async (tx, run) => {
      const outcome = await checkLimits(tx, run.config, run.log, { runId: run.runId, from: run.from, portfolios: run.portfolios });
      run.alertsRaised += outcome.alertsRaised;
    },
  },
  KEEP_REPLACED,
  PRUNE_HISTORY,
  closeRunFailure,
];
