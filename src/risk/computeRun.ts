import type { Logger } from 'pino';
import type { Database } from '../storage/database.ts';
import type { Config } from '../config/load.ts';
import type { PhaseClock } from '../log/phaseClock.ts';
import type { EstimatorStates } from './estimators/estimator.ts';
import { registeredEstimators } from './estimators/registry.ts';
import { readBenchmarkPanel } from './inputs/benchmarkPanel.ts';
import { readPortfolioPanel, readReturnPanel, readValuationDates, type PortfolioPanel, type ReturnPanel } from './inputs/panels.ts';
import { computeRisk, progressUnits } from './runtime/computeRisk.ts';
import { startProgress } from './runtime/progress.ts';
import { ResultStage } from './store/staging.ts';

/** The dates and portfolios one run recomputes. */
export interface RiskScope {
  runId: number;
  /** 'YYYY-MM-DD'; null: full backfill. */
  from: string | null;
  /** null: every portfolio. */
  portfolios: string[] | null;
  /** JSON of the settings the run's results are made with: a stored estimator state is continued only if made with the same. */
  settings: string;
}

/** What the compute left for the write step: rows in the staging tables, the estimators' states to keep. */
export interface ComputedRisk {
  /** Every valuation date read, ascending. */
  dates: string[];
  /** Portfolios that had positions in scope. */
  portfolios: number;
  /** risk_daily rows staged. */
  riskRows: number;
  /** The states the estimators keep, by name (the EWMA: at the last two dates, oldest first). */
  states: EstimatorStates;
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
 * (store/staging.ts `replaceResults`, `saveEstimatorStates`); `dropStaging` cleans up.
 * A portfolio whose compute fails is returned in `failures` with none of its rows
 * staged; the others are unaffected. `beside` is handed the inputs once they are read,
 * before the estimates (the loss stage starts its own reads there).
 */
export async function computeRun(
  db: Database,
  config: Config,
  log: Logger,
  scope: RiskScope,
  phases: PhaseClock,
  beside: (inputs: ComputedRisk['inputs']) => void = () => undefined,
): Promise<ComputedRisk> {
  const rlog = log.child({ stage: 'risk', runId: scope.runId });
  const dates = await phases.time('read_dates', () => readValuationDates(db));
  const fromRow = scope.from === null ? 0 : firstRowOnOrAfter(dates, scope.from);
  const states = await phases.time('load_estimator_state', () => loadEstimatorStates(db, config, dates, fromRow, scope.settings));
  const longest = Math.max(...config.risk.windows);
  // benchmarks and portfolio returns from the longest window before the first output row
  // (realized figures; the loss stage's backtest and worst windows); holdings too when the
  // weights are averaged over the window, else from the day before the first output row
  // (the first change split, the first backtest P&L)
  const firstRow = Math.max(0, fromRow - longest + 1);
  const holdingsFromRow = config.risk.weights === 'window_average' ? firstRow : Math.max(firstRow, fromRow - 1);
  const returns = await phases.time('read_returns', () => readReturns(db, config, dates, fromRow, firstRow, scope.portfolios, states));
  const portfolios = await phases.time('read_portfolios', () => readPortfolioPanel(db, dates.length, firstRow, scope.portfolios, holdingsFromRow));
  const benchmarks = await phases.time('read_benchmarks', () => readBenchmarkPanel(db, config, portfolios.ids, dates.length, firstRow));
  for (const id of scope.portfolios ?? []) {
    if (!portfolios.ids.includes(id)) rlog.warn({ portfolio: id }, 'no positions for this portfolio: nothing to compute');
  }
  rlog.debug({ fromRow, returnsFrom: returns.returnsFrom, dates: dates.length, securities: returns.securityIds.length, ...fromStateFlags(config, states) }, 'inputs read');

  // work that needs the inputs and not the estimates starts now and runs beside them
  beside({ returns, portfolios, fromRow });
  const stage = await ResultStage.open(db);
  const progress = startProgress(rlog, progressUnits(config, dates.length, fromRow), 'recompute');
  let kept: EstimatorStates = {};
  const computeStarted = performance.now();
  try {
    kept = await computeRisk({ returns, portfolios, benchmarks, fromRow, states }, config, (batch) => stage.append(batch), progress, rlog);
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
  return { dates, portfolios: portfolios.ids.length, riskRows, states: kept, inputs: { returns, portfolios, fromRow }, failures };
}

/**
 * The security returns from the longest lookback before the first output row (a window
 * and the day before it, the EWMA's seed, the loss stage's scenarios, which continue its
 * stored sigmas) when every estimator that keeps a state continues it; from the first
 * date when one replays (no state, or one that misses a security the run reads: then the
 * returns are read again, from the first date).
 */
async function readReturns(
  db: Database,
  config: Config,
  dates: string[],
  fromRow: number,
  firstRow: number,
  portfolios: string[] | null,
  states: Record<string, unknown>,
): Promise<ReturnPanel> {
  const plugins = keepingState(config);
  const windows = registeredEstimators().flatMap((plugin) => plugin.windows(config));
  const lookback = Math.max(...windows, config.risk.ewma.seedDays, ...config.risk.historical.days) + 1;
  const returnsFrom = plugins.every((plugin) => plugin.name in states) ? Math.max(0, fromRow - lookback) : 0;
  const returns = await readReturnPanel(db, dates, firstRow, portfolios, returnsFrom);
  if (returnsFrom === 0) return returns;
  // the estimate itself then finds the same and replays
  const fit = plugins.every((plugin) => plugin.storedState!.fits?.(states[plugin.name], returns, config) !== false);
  return fit ? returns : readReturnPanel(db, dates, firstRow, portfolios, 0);
}

/** The estimators that keep a state between runs and run with this config. */
function keepingState(config: Config) {
  return registeredEstimators().filter((plugin) => plugin.storedState && plugin.windows(config).length > 0);
}

/** The stored state at fromRow - 1 of each of them that has one. */
async function loadEstimatorStates(db: Database, config: Config, dates: readonly string[], fromRow: number, settings: string) {
  const states: Record<string, unknown> = {};
  for (const plugin of keepingState(config)) {
    const state = await plugin.storedState!.load(db, config, dates, fromRow, settings);
    if (state !== null) states[plugin.name] = state;
  }
  return states;
}

/** `<name>FromState` of each of them: whether it continues a stored state. */
function fromStateFlags(config: Config, states: Record<string, unknown>): Record<string, boolean> {
  return Object.fromEntries(keepingState(config).map((plugin) => [`${plugin.name}FromState`, plugin.name in states]));
}

/**
 * Inside the run's write transaction: each estimator that keeps a state replaces its
 * stored one with the run's (none kept: it was switched off, or no dates are left).
 */
export async function saveEstimatorStates(db: Database, config: Config, risk: Pick<ComputedRisk, 'dates' | 'states'>, runId: number, settings: string): Promise<void> {
  for (const plugin of registeredEstimators()) {
    await plugin.storedState?.save(db, config, risk.dates, risk.states[plugin.name] ?? [], runId, settings);
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
