import type { Logger } from 'pino';
import type { Config } from '../config/load.ts';
import { WORST_WINDOW_PREFIX } from '../config/stressSchema.ts';
import type { PortfolioPanel, ReturnPanel } from '../risk/inputs/panels.ts';
import { readColumns } from '../storage/columnar.ts';
import type { Database } from '../storage/database.ts';
import { backtestRows, seriesId, VarHistory } from './backtestRows.ts';
import type { LossFailure } from './historicalVar.ts';
import { LossStage, type VarRow } from './lossStage.ts';
import { walkHistorical } from './parallelHistorical.ts';
import { securitySigmas } from './securitySigmas.ts';
import { stressRows, type StressBook } from './stressRows.ts';
import { WORST_WINDOW_DAYS, worstWindowsUpTo, type WorstWindows } from './worstWindows.ts';

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
}

export interface LossSummary {
  varRows: number;
  backtestRows: number;
  stressRows: number;
  /** Portfolios whose loss figures could not be computed (by date row of the first failure); the others are staged. */
  failures: LossFailure[];
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
    const sigmaAfter = securitySigmas(returns, config.risk.ewma.lambda, config.risk.ewma.seedDays);
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
    backtestRows(history, portfolios, returns.dates, fromRow, await readPriorFlags(db, inputs), (row) => stage.addBacktest(row), fail);
    if (fromRow < t) {
      const books = await readLatestBooks(db, inputs);
      const stored = await readStoredWorst(db, inputs);
      // the whole history is read only when a portfolio has no stored worst windows to continue
      // from, or the panel does not reach back over the longest window before the run
      const continues = fromRow - Math.max(...WORST_WINDOW_DAYS) >= portfolios.firstRow && [...books.keys()].every((p) => stored.has(p));
      const series = continues ? portfolios.logReturn : await readPortfolioReturns(db, portfolios, t);
      for (const [p, book] of books) {
        if (failures.has(p)) continue;
        try {
          const worst = worstWindowsUpTo(series.subarray(p * t, (p + 1) * t), book.d, fromRow, continues ? stored.get(p)! : null);
          const stress = { portfolioId: portfolios.ids[p], d: book.d, holdings: book.holdings, returns, worst };
          stressRows(stress, config.stress.scenarios, config.baseCurrency, (row) => stage.addStress(row));
        } catch (err) {
          fail({ p, d: book.d, message: `stress scenarios: ${err instanceof Error ? err.message : String(err)}` });
        }
      }
    }
    closed = true;
    const summary = { ...stage.close(), failures: [...failures.values()].sort((a, b) => a.p - b.p) };
    log.debug({ stage: 'loss', ...summary, failures: summary.failures.length }, 'loss rows staged');
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

/** Per series, the exception flags of the last 249 tested days before the run, oldest first. */
async function readPriorFlags(db: Database, inputs: LossInputs): Promise<Map<string, number[]>> {
  const { fromRow, returns, portfolios } = inputs;
  const flags = new Map<string, number[]>();
  if (fromRow < 1 || fromRow >= returns.dates.length) return flags;
  const rows = await db.all<{ portfolio_id: string; method: string; window_days: number; estimator: string | null; flags: boolean[] }>(
    `select portfolio_id, method, window_days, estimator, list(exception order by date) as flags
     from (
       select *, row_number() over (partition by portfolio_id, method, window_days, estimator order by date desc) as back
       from var_backtest
       where date < $1::date and list_contains(from_json($2::varchar, '["VARCHAR"]'), portfolio_id)
     )
     where back < 250
     group by all`,
    [returns.dates[fromRow], JSON.stringify(portfolios.ids)],
  );
  const index = new Map(portfolios.ids.map((id, p) => [id, p]));
  for (const r of rows) {
    const key = { p: index.get(r.portfolio_id)!, method: r.method, windowDays: r.window_days, estimator: r.estimator };
    flags.set(seriesId(key), r.flags.map((f) => (f ? 1 : 0)));
  }
  return flags;
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
 * The worst windows each portfolio had up to the day before the run, as stored then (its
 * stress rows of that date); a portfolio is left out unless all of them can be read back.
 */
async function readStoredWorst(db: Database, inputs: LossInputs): Promise<Map<number, WorstWindows>> {
  const { fromRow, returns, portfolios } = inputs;
  const out = new Map<number, WorstWindows>();
  if (fromRow < 1) return out;
  const rows = await db.all<{ portfolio_id: string; scenario_id: string; pnl_pct: number | null; coverage: number | null; range_to: string | null }>(
    `select portfolio_id, scenario_id, pnl_pct, coverage, range_to from stress_results
     where date = $1::date and starts_with(scenario_id, $2) and list_contains(from_json($3, '["VARCHAR"]'), portfolio_id)`,
    [returns.dates[fromRow - 1], WORST_WINDOW_PREFIX, JSON.stringify(portfolios.ids)],
  );
  const rowOf = new Map(returns.dates.map((date, d) => [date, d]));
  const index = new Map(portfolios.ids.map((id, p) => [id, p]));
  const found = new Map<number, WorstWindows>();
  for (const r of rows) {
    const p = index.get(r.portfolio_id)!;
    const days = Number(r.scenario_id.slice(WORST_WINDOW_PREFIX.length, -1));
    let windows = found.get(p);
    if (!windows) found.set(p, (windows = new Map()));
    // no window at all (coverage 0), or one whose return can be read back (a positive value)
    if (r.coverage === 0) windows.set(days, null);
    else if (r.pnl_pct !== null && r.range_to !== null && rowOf.has(r.range_to)) windows.set(days, { start: rowOf.get(r.range_to)! - days + 1, return: r.pnl_pct });
  }
  for (const [p, windows] of found) if (WORST_WINDOW_DAYS.every((days) => windows.has(days))) out.set(p, windows);
  return out;
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
