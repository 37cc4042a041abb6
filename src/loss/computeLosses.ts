import type { Logger } from 'pino';
import type { Config } from '../config/load.ts';
import { readEarlierReturns, readReturnRows, type PortfolioPanel, type ReturnPanel } from '../risk/inputs/panels.ts';
import { readColumns } from '../storage/columnar.ts';
import type { Database } from '../storage/database.ts';
import { backtestRows, VarHistory } from './backtestRows.ts';
import type { LossFailure } from './historicalVar.ts';
import { LossStage, type VarRow } from './lossStage.ts';
import { walkHistorical } from './parallelHistorical.ts';
import { sigmaRowsToKeep, worstRowsToKeep, type LossState } from './lossState.ts';
import { continueSecurityVariances } from './securitySigmas.ts';
import { PRIOR_FLAGS, readPriorFlags, type StoredLossInputs } from './storedReads.ts';
import { historicalRanges, rangeKey, stressRows, type StressBook } from './stressRows.ts';
import { WORST_WINDOW_DAYS, worstWindowsAt, type WorstWindows } from './worstWindows.ts';

/**
 * The loss stage: historical and filtered historical VaR/ES, the VaR backtest of every
 * method and the stress scenarios, for the run's portfolios and dates. It takes the risk
 * stage's panels (the same returns and holdings), reads the normal VaR just staged and
 * takes what it needs of the stored tables (the day before the run, the backtest flags
 * before it, its states, the latest holdings' reference data) from the reads
 * storedReads.ts started beside the estimates, computes, and stages the rows outside any
 * transaction; `writeLosses` (lossStage.ts) swaps them in inside the run's one.
 */

export interface LossInputs {
  returns: ReturnPanel;
  portfolios: PortfolioPanel;
  /** First date row of the run. */
  fromRow: number;
  /** The run's result settings (JSON): a stored state is continued only if made with the same. */
  settings: string;
}

export interface LossSummary {
  varRows: number;
  backtestRows: number;
  stressRows: number;
  /** Portfolios whose loss figures could not be computed (by date row of the first failure); the others are staged. */
  failures: LossFailure[];
  /** What the run keeps for the next one (lossState.ts), saved by its write step. */
  state: LossState;
}

/**
 * Reads, computes and stages; call after the risk stage has staged its rows
 * (risk_stage_daily), with the stored inputs startStoredReads began beside it.
 */
export async function computeLosses(db: Database, config: Config, log: Logger, inputs: LossInputs, reading: Promise<StoredLossInputs>): Promise<LossSummary> {
  const { returns, portfolios, fromRow } = inputs;
  const t = returns.dates.length;
  const stage = await LossStage.open(db);
  let closed = false;
  try {
    const stored = await reading;
    const history = new VarHistory(t);
    await readPredictedVar(db, history);
    for (const { key, var99 } of stored.varBefore) history.set(key, fromRow - 1, var99);
    const sigma = await sigmasAfter(db, config, inputs, stored.sigmaState);
    const sigmaAfter = sigma.sigmaAfter;
    const settings = { days: config.risk.historical.days, minCoverage: config.risk.minCoverage };
    // the first failure of each portfolio; its rows are staged all the same and left out when written
    const failures = new Map<number, LossFailure>();
    const fail = (f: LossFailure) => {
      const known = failures.get(f.p);
      if (!known || f.d < known.d) failures.set(f.p, f);
    };
    const emit = (row: VarRow, p: number, d: number) => {
      stage.addVar(row);
      history.set({ p, method: row.method, windowDays: row.windowDays, estimator: null }, d, row.var99);
    };
    await walkHistorical({ returns, portfolios, fromRow, sigmaAfter }, settings, emit, fail);
    const prior = await withShortSeriesReadAgain(db, inputs, history, stored);
    backtestRows(history, portfolios, returns.dates, fromRow, prior.flags, (row) => stage.addBacktest(row), fail);
    let worst: LossState['worst'] = null;
    if (fromRow < t) {
      const { books, worst: storedWorst } = stored;
      // the whole history is read only when a portfolio has no stored worst windows to continue
      // from, or the panel does not reach back over the longest window before the run
      const continues = fromRow - Math.max(...WORST_WINDOW_DAYS) >= portfolios.firstRow && portfolios.ids.every((_, p) => storedWorst.has(p));
      const series = continues ? portfolios.logReturn : await readPortfolioReturns(db, portfolios, t);
      const earlier = await readRangeBlocks(db, returns, historicalRanges(returns.dates, config.stress.scenarios));
      // the last two dates are kept for the next run: a new day continues from the last, a redo of the last date from the one before
      const keep = [t - 2, t - 1].filter((d) => d >= 0 && d >= fromRow - 1);
      const at = new Map<number, Map<number, WorstWindows>>();
      for (let p = 0; p < portfolios.ids.length; p++) {
        if (failures.has(p)) continue;
        const byDate = books.get(p) ?? new Map<number, StressBook[]>();
        let d = t - 1; // where a failure is reported: the date being staged, else the last
        try {
          const windows = worstWindowsAt(series.subarray(p * t, (p + 1) * t), fromRow, [...keep, ...byDate.keys()], continues ? storedWorst.get(p)! : null);
          at.set(p, windows);
          for ([d] of byDate) {
            const stress = { portfolioId: portfolios.ids[p], d, holdings: byDate.get(d)!, returns, worst: windows.get(d)!, earlier };
            stressRows(stress, config.stress.scenarios, config.baseCurrency, (row) => stage.addStress(row));
          }
        } catch (err) {
          at.delete(p);
          fail({ p, d, message: `stress scenarios: ${err instanceof Error ? err.message : String(err)}` });
        }
      }
      worst = worstRowsToKeep(returns.dates, portfolios.ids, at, keep);
      log.debug({ stage: 'loss', sigmaFromState: sigma.fromState, worstFromState: continues, flagsReadAgain: prior.readAgain }, 'loss state read');
    }
    closed = true;
    const state: LossState = { sigma: fromRow < t ? sigmaRowsToKeep(returns, sigma.variances, config) : null, worst };
    const summary = { ...stage.close(), failures: [...failures.values()].sort((a, b) => a.p - b.p), state };
    log.debug({ stage: 'loss', ...summary, failures: summary.failures.length, state: undefined }, 'loss rows staged');
    return summary;
  } finally {
    if (!closed) stage.close();
  }
}

/** The normal VaR the risk stage just staged. */
async function readPredictedVar(db: Database, history: VarHistory): Promise<void> {
  const normal = await readColumns(
    db,
    `select p, date_index, window_days, estimator, var_99_1d from risk_stage_daily`,
    undefined,
    { p: 'int', date_index: 'int', window_days: 'int', estimator: 'text', var_99_1d: 'double' },
  );
  const c = normal.columns;
  for (let i = 0; i < normal.rows; i++) {
    history.set({ p: c.p[i], method: 'normal', windowDays: c.window_days[i], estimator: c.estimator[i] }, c.date_index[i] - 1, c.var_99_1d[i]);
  }
}

/**
 * The stored flags of the last 2 x 250 dates; a series of the run with fewer there
 * (young, or untested for a while) is read again over every date before the run, as its
 * window may reach further back.
 */
async function withShortSeriesReadAgain(
  db: Database,
  inputs: LossInputs,
  history: VarHistory,
  stored: StoredLossInputs,
): Promise<{ flags: Map<string, number[]>; readAgain: number }> {
  const { priorFlags: flags, flagsSince } = stored;
  const { fromRow, returns, portfolios } = inputs;
  if (fromRow < 1 || fromRow >= returns.dates.length || flagsSince === null) return { flags, readAgain: 0 };
  const short = new Set<number>();
  for (const [id, series] of history.series) if ((flags.get(id)?.length ?? 0) < PRIOR_FLAGS) short.add(series.p);
  if (short.size === 0) return { flags, readAgain: 0 };
  const again = await readPriorFlags(db, inputs, null, [...short].map((p) => portfolios.ids[p]));
  return { flags: new Map([...flags, ...again]), readAgain: short.size };
}

/**
 * Each security's EWMA variance (T x N) and sigma after each row the run's scenarios read:
 * continued from the stored variances before the run when they fit, else replayed from
 * the first date (the returns before the panel's first read row are read first).
 */
async function sigmasAfter(
  db: Database,
  config: Config,
  inputs: LossInputs,
  stored: Float64Array | null,
): Promise<{ variances: Float64Array; sigmaAfter: Float64Array; fromState: boolean }> {
  const { returns, portfolios, fromRow } = inputs;
  const t = returns.dates.length;
  const n = returns.securityIds.length;
  const { lambda, seedDays } = config.risk.ewma;
  const variances = stored ?? new Float64Array(t * n).fill(Number.NaN);
  if (stored === null && fromRow < t) await readEarlierReturns(db, returns, 0);
  continueSecurityVariances(returns, lambda, seedDays, variances, stored === null ? 0 : fromRow);
  // only the rows the run's scenarios read: from the longest lookback before its first date
  const sigmaAfter = new Float64Array(t * n).fill(Number.NaN);
  const first = Math.max(0, Math.max(fromRow, portfolios.firstRow) - Math.max(...config.risk.historical.days)) * n;
  for (let i = first; i < t * n; i++) sigmaAfter[i] = Math.sqrt(variances[i]);
  return { variances, sigmaAfter, fromState: stored !== null };
}

/**
 * The returns (rows x N, the panel's securities) of each stress range that starts before
 * the rows the run read: only the range's own rows, a handful against the years between
 * a range far back and today.
 */
async function readRangeBlocks(db: Database, returns: ReturnPanel, ranges: [number, number][]): Promise<Map<string, Float64Array>> {
  const n = returns.securityIds.length;
  const blocks = new Map<string, Float64Array>();
  for (const [first, last] of ranges) {
    if (first >= (returns.returnsFrom ?? 0) || blocks.has(rangeKey(first, last))) continue;
    const block = new Float64Array((last - first + 1) * n).fill(Number.NaN);
    const raw = await readReturnRows(db, first, last);
    // date_index counts valuation dates from 1, the panel's rows from 0
    for (let i = 0; i < raw.rows; i++) block[(raw.columns.date_index[i] - 1 - first) * n + raw.columns.k[i]] = raw.columns.log_return[i];
    blocks.set(rangeKey(first, last), block);
  }
  return blocks;
}

/**
 * Each portfolio's holdings log return over its whole stored history (P x T): the
 * panel's rows, and before its first row the view's (the worst windows look at all of it).
 */
async function readPortfolioReturns(db: Database, portfolios: PortfolioPanel, t: number): Promise<Float64Array> {
  const out = Float64Array.from(portfolios.logReturn);
  if (portfolios.firstRow === 0) return out;
  const earlier = await readColumns(
    db,
    `select p.k, r.date_index, r.log_return::double
     from ret_portfolios r join risk_in_portfolios p using (portfolio_id)
     where r.date_index <= $1`,
    [portfolios.firstRow],
    { k: 'int', date_index: 'int', log_return: 'double' },
  );
  const c = earlier.columns;
  for (let i = 0; i < earlier.rows; i++) out[c.k[i] * t + c.date_index[i] - 1] = c.log_return[i];
  return out;
}
