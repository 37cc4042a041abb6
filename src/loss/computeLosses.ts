import type { Logger } from 'pino';
import type { Config } from '../config/load.ts';
import { readEarlierReturns, type PortfolioPanel, type ReturnPanel } from '../risk/inputs/panels.ts';
import { readColumns } from '../storage/columnar.ts';
import type { Database } from '../storage/database.ts';
import { BASEL_OBSERVATIONS } from '../risk/math/backtest.ts';
import { backtestRows, seriesId, VarHistory } from './backtestRows.ts';
import type { LossFailure } from './historicalVar.ts';
import { LossStage, type VarRow } from './lossStage.ts';
import { walkHistorical } from './parallelHistorical.ts';
import { loadSigmaState, loadWorstState, sigmaRowsToKeep, worstRowsToKeep, type LossState } from './lossState.ts';
import { continueSecurityVariances } from './securitySigmas.ts';
import { historicalRangeStart, stressRows, type StressBook } from './stressRows.ts';
import { WORST_WINDOW_DAYS, worstWindowsAt, type WorstWindows } from './worstWindows.ts';

/**
 * The loss stage: historical and filtered historical VaR/ES, the VaR backtest of every
 * method and the stress scenarios, for the run's portfolios and dates. It takes the risk
 * stage's panels (the same returns and holdings), reads the little it needs besides
 * (the normal VaR just staged, the day before the run, the backtest flags before it,
 * the latest holdings' reference data), computes, and stages the rows outside any
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

/** Reads, computes and stages; call after the risk stage has staged its rows (risk_stage_daily). */
export async function computeLosses(db: Database, config: Config, log: Logger, inputs: LossInputs): Promise<LossSummary> {
  const { returns, portfolios, fromRow } = inputs;
  const t = returns.dates.length;
  const stage = await LossStage.open(db);
  let closed = false;
  try {
    const history = new VarHistory(t);
    await readPredictedVar(db, inputs, history);
    const sigma = await sigmasAfter(db, config, inputs);
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
    const prior = await readPriorFlags(db, inputs, history);
    backtestRows(history, portfolios, returns.dates, fromRow, prior.flags, (row) => stage.addBacktest(row), fail);
    let worst: LossState['worst'] = null;
    if (fromRow < t) {
      const books = await readLatestBooks(db, inputs);
      const stored = await loadWorstState(db, returns.dates, fromRow, portfolios.ids, inputs.settings);
      // the whole history is read only when a portfolio has no stored worst windows to continue
      // from, or the panel does not reach back over the longest window before the run
      const continues = fromRow - Math.max(...WORST_WINDOW_DAYS) >= portfolios.firstRow && portfolios.ids.every((_, p) => stored.has(p));
      const series = continues ? portfolios.logReturn : await readPortfolioReturns(db, portfolios, t);
      await readStressRanges(db, config, returns);
      // the last two dates are kept for the next run: a new day continues from the last, a redo of the last date from the one before
      const keep = [t - 2, t - 1].filter((d) => d >= 0 && d >= fromRow - 1);
      const at = new Map<number, Map<number, WorstWindows>>();
      for (let p = 0; p < portfolios.ids.length; p++) {
        if (failures.has(p)) continue;
        const book = books.get(p);
        try {
          const windows = worstWindowsAt(series.subarray(p * t, (p + 1) * t), fromRow, book ? [...keep, book.d] : keep, continues ? stored.get(p)! : null);
          at.set(p, windows);
          if (!book) continue;
          const stress = { portfolioId: portfolios.ids[p], d: book.d, holdings: book.holdings, returns, worst: windows.get(book.d)! };
          stressRows(stress, config.stress.scenarios, config.baseCurrency, (row) => stage.addStress(row));
        } catch (err) {
          at.delete(p);
          fail({ p, d: book?.d ?? t - 1, message: `stress scenarios: ${err instanceof Error ? err.message : String(err)}` });
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

/** The normal VaR the risk stage just staged, and every method's stored VaR of the day before the run. */
async function readPredictedVar(db: Database, inputs: LossInputs, history: VarHistory): Promise<void> {
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
  const { fromRow, returns, portfolios } = inputs;
  // nothing to test when the run has no date of its own
  if (fromRow < 1 || fromRow >= returns.dates.length) return;
  const before = await readColumns(
    db,
    `select portfolio_id, method, window_days, estimator, var_99_1d from var_daily
     where date = $1::date and list_contains(from_json($2, '["VARCHAR"]'), portfolio_id)`,
    [returns.dates[fromRow - 1], JSON.stringify(portfolios.ids)],
    { portfolio_id: 'text', method: 'text', window_days: 'int', estimator: 'text', var_99_1d: 'double' },
  );
  const index = new Map(portfolios.ids.map((id, p) => [id, p]));
  const b = before.columns;
  for (let i = 0; i < before.rows; i++) {
    const key = { p: index.get(b.portfolio_id[i] as string)!, method: b.method[i] as string, windowDays: b.window_days[i], estimator: b.estimator[i] };
    history.set(key, fromRow - 1, b.var_99_1d[i]);
  }
}

/**
 * Per series, the exception flags of the last 249 tested days before the run, oldest
 * first. Read from the last 2 x 250 dates first (a read of every date grows with the
 * history); a series of the run with fewer flags there (young, or untested for a while)
 * is read again over every date before the run, as its window may reach further back.
 */
async function readPriorFlags(db: Database, inputs: LossInputs, history: VarHistory): Promise<{ flags: Map<string, number[]>; readAgain: number }> {
  const { fromRow, returns, portfolios } = inputs;
  const flags = new Map<string, number[]>();
  if (fromRow < 1 || fromRow >= returns.dates.length) return { flags, readAgain: 0 };
  const index = new Map(portfolios.ids.map((id, p) => [id, p]));
  const kept = BASEL_OBSERVATIONS - 1;
  const bound = Math.max(0, fromRow - 2 * BASEL_OBSERVATIONS);
  const read = async (since: string | null, ids: readonly string[]) => {
    const rows = await db.all<{ portfolio_id: string; method: string; window_days: number; estimator: string | null; flags: boolean[] }>(
      // max_by(.., n): the flags of the n latest dates, latest first (a top-n per group, no window over every row)
      `select portfolio_id, method, window_days, estimator, max_by(exception, date, $4) as flags
       from var_backtest
       where date < $1::date and ($3::date is null or date >= $3::date) and list_contains(from_json($2::varchar, '["VARCHAR"]'), portfolio_id)
       group by all`,
      [returns.dates[fromRow], JSON.stringify(ids), since, kept],
    );
    for (const r of rows) {
      const key = { p: index.get(r.portfolio_id)!, method: r.method, windowDays: r.window_days, estimator: r.estimator };
      flags.set(seriesId(key), r.flags.map((f) => (f ? 1 : 0)).reverse());
    }
  };
  await read(bound > 0 ? returns.dates[bound] : null, portfolios.ids);
  if (bound === 0) return { flags, readAgain: 0 };
  const short = new Set<number>();
  for (const [id, series] of history.series) if ((flags.get(id)?.length ?? 0) < kept) short.add(series.p);
  if (short.size > 0) await read(null, [...short].map((p) => portfolios.ids[p]));
  return { flags, readAgain: short.size };
}

/**
 * Each portfolio's holdings at its latest date of the run with a positive value, with
 * the currency and asset class the hypothetical shocks match on.
 */
async function readLatestBooks(db: Database, inputs: LossInputs): Promise<Map<number, { d: number; holdings: StressBook[] }>> {
  const { returns, portfolios, fromRow } = inputs;
  const t = returns.dates.length;
  const latest = new Map<string, number>();
  portfolios.ids.forEach((id, p) => {
    for (let d = t - 1; d >= fromRow; d--) {
      if (portfolios.value[p * t + d] > 0 && portfolios.unpriced[p * t + d] === 0) {
        latest.set(id, d);
        return;
      }
    }
  });
  const books = new Map<number, { d: number; holdings: StressBook[] }>();
  if (latest.size === 0) return books;
  // date_index counts valuation dates from 1, the panels' rows from 0
  const dateIndexes = [...latest.values()].map((d) => d + 1);
  const rows = await db.all<{ portfolio_id: string; security_id: string; currency: string; is_cash: boolean; asset_class: string | null; value_base: number }>(
    `with wanted as (select unnest(from_json($1, '["VARCHAR"]')) as portfolio_id, unnest(from_json($2, '["INTEGER"]')) as date_index)
     select w.portfolio_id, w.security_id, w.currency, w.is_cash, s.asset_class, w.value_base::double as value_base
     -- the date-bounded twin: the plain view would value every date of the history first
     from value_weights_since($3) w
     join wanted using (portfolio_id, date_index)
     left join clean_securities s using (security_id)
     where w.value_base is not null
     order by w.portfolio_id, w.security_id`,
    [JSON.stringify([...latest.keys()]), JSON.stringify(dateIndexes), Math.min(...dateIndexes)],
  );
  const index = new Map(portfolios.ids.map((id, p) => [id, p]));
  for (const r of rows) {
    const p = index.get(r.portfolio_id)!;
    let book = books.get(p);
    if (!book) books.set(p, (book = { d: latest.get(r.portfolio_id)!, holdings: [] }));
    book.holdings.push({ security: r.security_id, currency: r.currency, isCash: r.is_cash, assetClass: r.asset_class, valueBase: r.value_base });
  }
  return books;
}

/**
 * Each security's EWMA variance (T x N) and sigma after each row the run's scenarios read:
 * continued from the stored variances before the run when they fit, else replayed from
 * the first date (the returns before the panel's first read row are read first).
 */
async function sigmasAfter(db: Database, config: Config, inputs: LossInputs): Promise<{ variances: Float64Array; sigmaAfter: Float64Array; fromState: boolean }> {
  const { returns, portfolios, fromRow } = inputs;
  const t = returns.dates.length;
  const n = returns.securityIds.length;
  const { lambda, seedDays } = config.risk.ewma;
  const stored = fromRow < t ? await loadSigmaState(db, config, returns, fromRow, inputs.settings) : null;
  const variances = stored ?? new Float64Array(t * n).fill(Number.NaN);
  if (stored === null && fromRow < t) await readEarlierReturns(db, returns, 0);
  continueSecurityVariances(returns, lambda, seedDays, variances, stored === null ? 0 : fromRow);
  // only the rows the run's scenarios read: from the longest lookback before its first date
  const sigmaAfter = new Float64Array(t * n).fill(Number.NaN);
  const first = Math.max(0, Math.max(fromRow, portfolios.firstRow) - Math.max(...config.risk.historical.days)) * n;
  for (let i = first; i < t * n; i++) sigmaAfter[i] = Math.sqrt(variances[i]);
  return { variances, sigmaAfter, fromState: stored !== null };
}

/** The returns of the configured historical stress ranges, where the run did not read them (they may lie far back). */
async function readStressRanges(db: Database, config: Config, returns: ReturnPanel): Promise<void> {
  const starts = config.stress.scenarios.flatMap((s) => (s.kind === 'historical' ? [historicalRangeStart(returns.dates, s.from, s.to)] : []));
  const first = Math.min(...starts.filter((row) => row !== null));
  if (Number.isFinite(first) && first < (returns.returnsFrom ?? 0)) await readEarlierReturns(db, returns, first);
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
