import type { Logger } from 'pino';
import { markSuspectScenarios, markSuspectWindows } from '../checks/suspectStatus.ts';
import { alertUnvaluedPortfolios } from '../checks/unvaluedPortfolios.ts';
import type { Config } from '../config/load.ts';
import { HOLD_BEFORE, KEEP_REPLACED, PRUNE_HISTORY } from '../history/historyWriters.ts';
import { checkLimits } from '../limits/checkLimits.ts';
import { saveLossState, type LossState } from '../loss/lossState.ts';
import { writeLosses } from '../loss/lossStage.ts';
import { saveEstimatorStates, type ComputedRisk, type RiskScope } from '../risk/computeRun.ts';
import { replaceResults } from '../risk/store/staging.ts';
import type { Database } from '../storage/database.ts';
import { portfolioIncidents } from './portfolioIncident.ts';
import { closeRunFailure } from './runIncident.ts';

/** What a writer knows about the run whose results it commits. */
export interface RunContext extends RiskScope {
  trigger: string;
  config: Config;
  log: Logger;
  /** The computed run: staged rows, dates, EWMA states (its input panels are let go before the write step). */
  risk: Omit<ComputedRisk, 'inputs'>;
  /** Every security whose returns the run read. */
  securityIds: readonly string[];
  /** What the loss stage keeps for the next run (src/loss/lossState.ts). */
  lossState: LossState;
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
 * The write step of every run: the rows it may replace held aside (history), risk rows
 * (none for a portfolio whose compute failed: it keeps its earlier ones) and their
 * suspect_price status, the loss rows (the same exception) and theirs, then the estimator and loss states
 * (replacesSecurityState),
 * then limits (which read the new rows) and their alerts, the portfolio_unvalued alerts,
 * then the replaced rows kept as history (and old history pruned), the failed
 * portfolios' episodes, then the close of a run failure episode. Every writer that
 * changes a kept table (src/history/keptTables.ts) comes between HOLD_BEFORE and
 * KEEP_REPLACED.
 */
export const RUN_WRITERS: readonly RunWriter[] = [
  HOLD_BEFORE,
  {
    name: 'write',
    write: (tx, run) =>
      replaceResults(tx, {
        runId: run.runId,
        from: run.from,
        portfolios: run.portfolios,
        contributions: run.config.risk.contributions,
        failed: run.risk.failures.map((f) => f.portfolioId),
      }),
  },
  { name: 'suspect_status', write: async (tx, run) => void (await markSuspectWindows(tx, run.runId)) },
  {
    // after the risk rows: var_daily copies the normal figures from risk_daily; before the limits, which read var_backtest
    name: 'write_losses',
    write: (tx, run) =>
      writeLosses(tx, { runId: run.runId, from: run.from, portfolios: run.portfolios, failed: run.risk.failures.map((f) => f.portfolioId) }),
  },
  { name: 'suspect_status_losses', write: async (tx, run) => void (await markSuspectScenarios(tx, run.runId)) },
  {
    name: 'save_ewma_state',
    write: async (tx, run) => {
      if (await replacesSecurityState(tx, run, 'risk_ewma_state')) await saveEstimatorStates(tx, run.config, run.risk, run.runId, run.settings);
    },
  },
  {
    name: 'save_loss_state',
    write: async (tx, run) => {
      const sigma = (await replacesSecurityState(tx, run, 'loss_sigma_state')) ? run.lossState.sigma : null;
      const failed = run.risk.failures.map((f) => f.portfolioId);
      await saveLossState(tx, run.config, { ...run.lossState, sigma }, { runId: run.runId, settings: run.settings, failed });
    },
  },
  {
    name: 'limits',
    write: async (tx, run) => {
      const outcome = await checkLimits(tx, run.config, run.log, { runId: run.runId, from: run.from, portfolios: run.portfolios });
      run.alertsRaised += outcome.alertsRaised;
    },
  },
  {
    name: 'unvalued',
    write: async (tx, run) => {
      run.alertsRaised += await alertUnvaluedPortfolios(tx, run.log, { runId: run.runId, portfolios: run.portfolios });
    },
  },
  KEEP_REPLACED,
  PRUNE_HISTORY,
  portfolioIncidents,
  closeRunFailure,
];

/**
 * Whether the run's by-security state replaces the stored one in `table` (the EWMA matrix,
 * the loss stage's variances): a full run's always; a run over some portfolios (a
 * positions correction, `recompute --portfolio`: it changes no return) only when it read
 * every security the stored one knows. One portfolio's securities stored alone would make
 * the next run miss the others and replay the whole history.
 */
async function replacesSecurityState(tx: Database, run: RunContext, table: 'risk_ewma_state' | 'loss_sigma_state'): Promise<boolean> {
  if (run.portfolios === null) return true;
  const [{ unread }] = await tx.all<{ unread: number }>(
    `select count(*)::integer as unread from (select distinct unnest(security_ids) as id from ${table})
     where not list_contains(from_json($1, '["VARCHAR"]'), id)`,
    [JSON.stringify(run.securityIds)],
  );
  return unread === 0;
}
