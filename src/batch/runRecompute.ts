import type { Logger } from 'pino';
import { checkPrices } from '../checks/checkPrices.ts';
import type { Config } from '../config/load.ts';
import { RiskfoldError } from '../errors.ts';
import { phaseClock } from '../log/phaseClock.ts';
import { computeLosses } from '../loss/computeLosses.ts';
import type { LossFailure } from '../loss/historicalVar.ts';
import { dropLossStage } from '../loss/lossStage.ts';
import { startStoredReads, type StoredLossInputs } from '../loss/storedReads.ts';
import { computeRun, type ComputedRisk, type PortfolioRiskFailure } from '../risk/computeRun.ts';
import { dropStagedPortfolios, dropStaging } from '../risk/store/staging.ts';
import type { Database } from '../storage/database.ts';
import { refreshDerived } from '../storage/derived.ts';
import { markRunDone, recordRunFailure, startRun } from './runRecord.ts';
import { resultSettings } from './runSettings.ts';
import { RUN_WRITERS, type RunContext, type RunWriter } from './runWriters.ts';

export interface RecomputeRequest {
  /** What asked for it, e.g. 'ingest:prices_20261130.csv', 'recompute', 'demo'. */
  trigger: string;
  /** 'YYYY-MM-DD'; null or absent: full backfill. */
  from?: string | null;
  /** null or absent: every portfolio. */
  portfolios?: string[] | null;
}

export interface RunSummary {
  runId: number;
  from: string | null;
  to: string | null;
  portfolios: number;
  riskRows: number;
  alertsRaised: number;
  seconds: number;
  /** Wall-clock seconds per phase (refresh_derived, read_returns, compute, write, limits, ...), in the order they ran. */
  phases: Record<string, number>;
  /** Portfolios whose risk could not be computed: left out of the run, each with its own incident. */
  failedPortfolios: PortfolioRiskFailure[];
}

/**
 * One run, from `from` on (earlier rows stay as they are) for the given portfolios:
 * records a risk_runs row (with the settings that shape its results), refreshes the derived tables, computes risk and
 * the losses (src/loss) into staging tables, then in ONE transaction runs every writer (risk rows, estimator state, limits
 * and their alerts in the outbox) and marks the run done. A failure marks the run
 * failed, raises a `run_failed` alert and rethrows; none of its results are visible. Delivering and publishing are the
 * batch's, after this returns.
 */
export async function runRecompute(
  db: Database,
  config: Config,
  log: Logger,
  request: RecomputeRequest,
  writers: readonly RunWriter[] = RUN_WRITERS,
): Promise<RunSummary> {
  const started = Date.now();
  const from = request.from ?? null;
  if (from !== null) requireIsoDate(from);
  const portfolios = request.portfolios ?? null;
  const settings = JSON.stringify(resultSettings(config));
  const runId = await startRun(db, { trigger: request.trigger, from, portfolios, settings });
  const rlog = log.child({ stage: 'batch', runId });
  rlog.info({ trigger: request.trigger, from, portfolios }, 'recompute started');
  const phases = phaseClock();
  const lossReads: { started?: Promise<StoredLossInputs> } = {};
  try {
    // before the prices are read: a suspect one is flagged (or held out) in this very run
    await phases.time('check_prices', () => checkPrices(db, config, log, { from }));
    // an explicit step: the readers of the views never rebuild what they read
    await phases.time('refresh_derived', () => refreshDerived(db, log));
    // the panels are let go once the loss stage has staged its rows: the write step does not need them;
    // the loss stage's reads of stored tables run beside the estimates, on a connection of their own
    const { inputs, ...computed } = await computeRun(db, config, log, { runId, from, portfolios, settings }, phases, (read) => {
      lossReads.started = startStoredReads(db, config, { ...read, settings });
    });
    const losses = await phases.time('losses', () => computeLosses(db, config, log, { ...inputs, settings }, lossReads.started!));
    const risk = await withLossFailures(db, rlog, computed, losses.failures, inputs);
    const run: RunContext = {
      runId,
      from,
      portfolios,
      settings,
      trigger: request.trigger,
      config,
      log,
      risk,
      securityIds: inputs.returns.securityIds,
      lossState: losses.state,
      alertsRaised: 0,
    };
    await db.transaction(async () => {
      for (const writer of writers) await phases.time(writer.name, () => writer.write(db, run));
      await markRunDone(db, runId, risk.riskRows);
    });
    const summary: RunSummary = {
      runId,
      from,
      to: risk.dates.length > 0 ? risk.dates[risk.dates.length - 1] : null,
      portfolios: risk.portfolios,
      riskRows: risk.riskRows,
      alertsRaised: run.alertsRaised,
      seconds: (Date.now() - started) / 1000,
      phases: phases.seconds,
      failedPortfolios: risk.failures,
    };
    rlog.info({ ...summary }, 'recompute done');
    return summary;
  } catch (err) {
    rlog.error({ err }, 'recompute failed');
    await recordRunFailure(db, { runId, trigger: request.trigger, from, portfolios, settings }, err).catch((markErr: unknown) =>
      rlog.error({ err: markErr }, 'could not record the failed run'),
    );
    throw err;
  } finally {
    // its session closes when its reads are done, before the database may be closed
    await lossReads.started?.catch(() => undefined);
    await dropStaging(db).catch(() => undefined);
    await dropLossStage(db).catch(() => undefined);
  }
}

/**
 * A portfolio whose loss figures failed fails the run for that portfolio as a risk
 * failure does: none of its rows (risk or loss) are written, its stored ones stay, and
 * it gets its incident (portfolioIncident.ts); the other portfolios are written.
 */
async function withLossFailures(
  db: Database,
  log: Logger,
  risk: Omit<ComputedRisk, 'inputs'>,
  failures: readonly LossFailure[],
  inputs: ComputedRisk['inputs'],
): Promise<Omit<ComputedRisk, 'inputs'>> {
  const known = new Set(risk.failures.map((f) => f.portfolioId));
  const added = failures.filter((f) => !known.has(inputs.portfolios.ids[f.p]));
  if (added.length === 0) return risk;
  const described = added.map((f) => ({ portfolioId: inputs.portfolios.ids[f.p], date: inputs.returns.dates[f.d], error: f.message }));
  for (const f of described) log.error({ portfolio: f.portfolioId, date: f.date, error: f.error }, 'loss figures of this portfolio not computed; the others go on');
  const riskRows = await dropStagedPortfolios(db, added.map((f) => f.p));
  const all = [...risk.failures, ...described].sort((a, b) => (a.portfolioId < b.portfolioId ? -1 : 1));
  return { ...risk, riskRows, failures: all };
}

/** 'YYYY-MM-DD' naming a real calendar date; anything else is a usage error. */
export function requireIsoDate(value: string, what = 'from date'): void {
  const m = /^(\d{4})-(\d{2})-(\d{2})$/.exec(value);
  const date = m ? new Date(Date.UTC(Number(m[1]), Number(m[2]) - 1, Number(m[3]))) : null;
  if (!date || date.toISOString().slice(0, 10) !== value) {
    throw new RiskfoldError('usage', `${what} "${value}" is not an ISO date (YYYY-MM-DD, e.g. 2026-03-31)`);
  }
}
