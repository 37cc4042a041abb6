import type { Logger } from 'pino';
import type { Config } from '../config/load.ts';
import { RiskfoldError } from '../errors.ts';
import { checkLimits } from '../limits/checkLimits.ts';
import { computeLosses } from '../loss/computeLosses.ts';
import { dropLossStage, writeLosses } from '../loss/lossStage.ts';
import type { Database } from '../storage/database.ts';
import { computeRisk, progressUnits } from './computeRisk.ts';
import type { EwmaState } from './ewmaEstimate.ts';
import { loadEwmaState, saveEwmaState } from './ewmaState.ts';
import { readPortfolioPanel, readReturnPanel } from './inputs.ts';
import { startProgress } from './progress.ts';
import { dropStaging, replaceResults, ResultStage } from './staging.ts';

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
  /** Rows written to var_daily (historical methods; the normal ones are copied from risk_daily), var_backtest, stress_results. */
  lossRows: { varRows: number; backtestRows: number; stressRows: number };
  alertsRaised: number;
  seconds: number;
  /** Wall-clock seconds per phase (inputs, compute, write, limits, ...), in the order they ran. */
  phases: Record<string, number>;
}

/**
 * Recomputes risk from `from` on (earlier rows stay as they are) for the given
 * portfolios: records a risk_runs row, reads the views in bulk, computes into staging
 * tables (the loss stage too, src/loss), then in ONE transaction replaces the scope's
 * rows of risk_daily, risk_contributions, security_stats, var_daily, var_backtest and
 * stress_results, stores the EWMA state, checks limits and
 * marks the run done. A failure marks the run failed and rethrows; nothing of it is
 * visible.
 */
export async function recompute(db: Database, config: Config, log: Logger, request: RecomputeRequest): Promise<RunSummary> {
  const started = Date.now();
  const from = request.from ?? null;
  if (from !== null) requireIsoDate(from);
  const scope = request.portfolios ?? null;
  const rlog = log.child({ stage: 'risk' });
  const [{ run_id: runId }] = await db.all<{ run_id: number }>(
    `insert into risk_runs (trigger, from_date, portfolios, status) values ($1, $2::date, from_json($3, '["VARCHAR"]'), 'running') returning run_id`,
    [request.trigger, from, scope === null ? null : JSON.stringify(scope)],
  );
  rlog.info({ runId, trigger: request.trigger, from, portfolios: scope }, 'recompute started');
  const phases = phaseClock();
  try {
    const returns = await phases.time('read_returns', () => readReturnPanel(db));
    const dates = returns.dates;
    const fromRow = from === null ? 0 : firstRowOnOrAfter(dates, from);
    const longest = Math.max(...config.risk.windows);
    const portfolios = await phases.time('read_portfolios', () => readPortfolioPanel(db, dates.length, Math.max(0, fromRow - longest + 1), scope));
    for (const id of scope ?? []) {
      if (!portfolios.ids.includes(id)) rlog.warn({ runId, portfolio: id }, 'no positions for this portfolio: nothing to compute');
    }
    const { ewma } = config.risk;
    const ewmaState = ewma.enabled ? await phases.time('load_ewma_state', () => loadEwmaState(db, ewma, dates, fromRow)) : null;
    rlog.debug({ runId, fromRow, dates: dates.length, securities: returns.securityIds.length, ewmaFromState: ewmaState !== null }, 'inputs read');

    const stage = await ResultStage.open(db);
    const progress = startProgress(rlog, progressUnits(config, dates.length, fromRow), 'recompute');
    let ewmaStates: EwmaState[] = [];
    const computeStarted = performance.now();
    try {
      ewmaStates = await computeRisk({ returns, portfolios, fromRow, ewmaState }, config, (batch) => stage.append(batch), progress, rlog);
    } finally {
      progress.finish();
      phases.add('compute', computeStarted);
      const flushStarted = performance.now();
      stage.close();
      phases.add('stage_flush', flushStarted);
    }
    const riskRows = stage.dailyRows;
    const losses = await phases.time('losses', () => computeLosses(db, config, log, { returns, portfolios, fromRow }));

    const limits = await db.transaction(async () => {
      await phases.time('write', () => replaceResults(db, { runId, from, portfolios: scope, contributions: config.risk.contributions }));
      await phases.time('write_losses', () => writeLosses(db, { runId, from, portfolios: scope }));
      await phases.time('save_ewma_state', () => saveEwmaState(db, ewma, dates, ewmaStates, runId));
      const outcome = await phases.time('limits', () => checkLimits(db, config, log, { runId, from, portfolios: scope }));
      await db.run(`update risk_runs set status = 'done', finished_at = now(), risk_rows = $2 where run_id = $1`, [runId, riskRows]);
      return outcome;
    });
    const summary: RunSummary = {
      runId,
      from,
      to: dates.length > 0 ? dates[dates.length - 1] : null,
      portfolios: portfolios.ids.length,
      riskRows,
      lossRows: losses,
      alertsRaised: limits.alertsRaised,
      seconds: (Date.now() - started) / 1000,
      phases: phases.seconds,
    };
    rlog.info({ ...summary }, 'recompute done');
    return summary;
  } catch (err) {
    const message = err instanceof Error ? err.message : String(err);
    await db
      .run(`update risk_runs set status = 'failed', finished_at = now(), error = $2 where run_id = $1`, [runId, message])
      .catch((markErr: unknown) => rlog.error({ runId, err: markErr }, 'could not mark the run failed'));
    rlog.error({ runId, err }, 'recompute failed');
    throw err;
  } finally {
    await dropStaging(db).catch(() => undefined);
    await dropLossStage(db).catch(() => undefined);
  }
}

/** Wall-clock seconds per named phase, so a slow run's log line says where the time went. */
function phaseClock() {
  const seconds: Record<string, number> = {};
  const add = (name: string, startedAt: number) => (seconds[name] = (seconds[name] ?? 0) + (performance.now() - startedAt) / 1000);
  return {
    seconds,
    add,
    async time<T>(name: string, fn: () => Promise<T>): Promise<T> {
      const startedAt = performance.now();
      try {
        return await fn();
      } finally {
        add(name, startedAt);
      }
    },
  };
}

/** 'YYYY-MM-DD' naming a real calendar date; anything else is a usage error. */
export function requireIsoDate(value: string): void {
  const m = /^(\d{4})-(\d{2})-(\d{2})$/.exec(value);
  const date = m ? new Date(Date.UTC(Number(m[1]), Number(m[2]) - 1, Number(m[3]))) : null;
  if (!date || date.toISOString().slice(0, 10) !== value) {
    throw new RiskfoldError('usage', `from date "${value}" is not an ISO date (YYYY-MM-DD, e.g. 2026-03-31)`);
  }
}

/** First date row on or after `from` (dates ascending, ISO strings compare as dates); dates.length if none. */
function firstRowOnOrAfter(dates: readonly string[], from: string): number {
  let lo = 0;
  let hi = dates.length;
  while (lo < hi) {
    const mid = (lo + hi) >> 1;
    if (dates[mid] < from) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}
