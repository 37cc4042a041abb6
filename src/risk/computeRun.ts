import type { Logger } from 'pino';
import type { Database } from '../storage/database.ts';
import type { Config } from '../config/load.ts';
import type { PhaseClock } from '../log/phaseClock.ts';
import { computeRisk, progressUnits } from './computeRisk.ts';
import type { EwmaState } from './ewmaEstimate.ts';
import { loadEwmaState } from './ewmaState.ts';
import { readBenchmarkPanel } from './benchmarkInputs.ts';
import { readPortfolioPanel, readReturnPanel, readValuationDates, type PortfolioPanel, type ReturnPanel } from './inputs.ts';
import { startProgress } from './progress.ts';
import { ResultStage } from './staging.ts';

/** The dates and portfolios one run recomputes. */
export interface RiskScope {
  runId: number;
  /** 'YYYY-MM-DD'; null: full backfill. */
  from: string | null;
  /** null: every portfolio. */
  portfolios: string[] | null;
  /** JSON of the settings the run's results are made with: stored EWMA state is continued only if made with the same. */
  settings: string;
}

/** What the compute left for the write step: rows in the staging tables, the EWMA states to keep. */
export interface ComputedRisk {
  /** Every valuation date read, ascending. */
  dates: string[];
  /** Portfolios that had positions in scope. */
  portfolios: number;
  /** risk_daily rows staged. */
  riskRows: number;
  /** EWMA states at the last two dates, oldest first (none without EWMA or dates). */
  ewmaStates: EwmaState[];
  /** The panels the run computed from, for the loss stage (src/loss) that revalues the same holdings. */
  inputs: { returns: ReturnPanel; portfolios: PortfolioPanel; fromRow: number };
  /** Portfolios whose risk could not be computed, by id: nothing of theirs is staged. */
  failures: PortfolioRiskFailure[];
}

export interface PortfolioRiskFailure {
  portfolioId: string;
  /** The valuation date of the first row that failed. */
  date: string;
  error: string;
}

/**
 * The risk stage of a run, outside any transaction: reads the views in bulk, only the
 * dates the run needs (the derived tables must be current: the batch refreshes them
 * first), computes every
 * estimate from `from` on and stages the rows. Writing them is the batch's write step
 * (staging.ts `replaceResults`, ewmaState.ts `saveEwmaState`); `dropStaging` cleans up.
 * A portfolio whose compute fails is returned in `failures` with none of its rows
 * staged; the others are unaffected.
 */
export async function computeRun(db: Database, config: Config, log: Logger, scope: RiskScope, phases: PhaseClock): Promise<ComputedRisk> {
  const rlog = log.child({ stage: 'risk', runId: scope.runId });
  const dates = await phases.time('read_dates', () => readValuationDates(db));
  const fromRow = scope.from === null ? 0 : firstRowOnOrAfter(dates, scope.from);
  const { ewma } = config.risk;
  const ewmaState = ewma.enabled ? await phases.time('load_ewma_state', () => loadEwmaState(db, ewma, dates, fromRow, scope.settings)) : null;
  const longest = Math.max(...config.risk.windows);
  // holdings, benchmarks and portfolio returns from the longest window before the first
  // output row (realized figures, averaged weights; the loss stage's backtest and worst
  // windows); security returns from the first date: the loss stage's EWMA-filtered
  // scenarios and stress ranges reach back that far
  const firstRow = Math.max(0, fromRow - longest + 1);
  const returns = await phases.time('read_returns', () => readReturnPanel(db, dates, firstRow));
  const portfolios = await phases.time('read_portfolios', () => readPortfolioPanel(db, dates.length, firstRow, scope.portfolios));
  const benchmarks = await phases.time('read_benchmarks', () => readBenchmarkPanel(db, config, portfolios.ids, dates.length, firstRow));
  for (const id of scope.portfolios ?? []) {
    if (!portfolios.ids.includes(id)) rlog.warn({ portfolio: id }, 'no positions for this portfolio: nothing to compute');
  }
  rlog.debug({ fromRow, dates: dates.length, securities: returns.securityIds.length, ewmaFromState: ewmaState !== null }, 'inputs read');

  const stage = await ResultStage.open(db);
  const progress = startProgress(rlog, progressUnits(config, dates.length, fromRow), 'recompute');
  let ewmaStates: EwmaState[] = [];
  const computeStarted = performance.now();
  try {
    ewmaStates = await computeRisk({ returns, portfolios, benchmarks, fromRow, ewmaState }, config, (batch) => stage.append(batch), progress, rlog);
  } finally {
    progress.finish();
    phases.add('compute', computeStarted);
    const flushStarted = performance.now();
    stage.close();
    phases.add('stage_flush', flushStarted);
  }
  const riskRows = await stage.dropFailed(db);
  const failures = [...stage.failures.values()]
    .map((f) => ({ portfolioId: portfolios.ids[f.portfolio], date: dates[f.row], error: f.message }))
    .sort((a, b) => (a.portfolioId < b.portfolioId ? -1 : 1));
  for (const f of failures) rlog.error({ portfolio: f.portfolioId, date: f.date, error: f.error }, 'risk of this portfolio not computed; the others go on');
  return { dates, portfolios: portfolios.ids.length, riskRows, ewmaStates, inputs: { returns, portfolios, fromRow }, failures };
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
