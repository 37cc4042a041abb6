import type { Config } from '../config/load.ts';
import { BASEL_OBSERVATIONS } from '../risk/math/backtest.ts';
import { readColumns } from '../storage/columnar.ts';
import type { Database } from '../storage/database.ts';
import { seriesId, type VarSeriesKey } from './backtestRows.ts';
import type { LossInputs } from './computeLosses.ts';
import { loadSigmaState, loadWorstState } from './lossState.ts';
import type { StressBook } from './stressRows.ts';
import type { WorstWindows } from './worstWindows.ts';

/**
 * What the loss stage reads of the stored tables, which needs nothing of the risk stage's
 * rows: read while the estimates are computed (the tables it reads are not written before
 * the run's write step), so that a new day does not wait for these small reads one after
 * the other once the estimates are done.
 */
export interface StoredLossInputs {
  /** Every method's stored VaR of the date before the run, by series. */
  varBefore: { key: VarSeriesKey; var99: number }[];
  /** loadSigmaState: the stored variances laid out as the panel's, or null (replay). */
  sigmaState: Float64Array | null;
  /** Per series, the exception flags of the tested days before the run, oldest first, read from the last 2 x 250 dates. */
  priorFlags: Map<string, number[]>;
  /** The earliest date the flags were read from (null: every date): a series with fewer is read again over every date. */
  flagsSince: string | null;
  /** Per portfolio, its holdings at each date whose stress rows the run writes (readStressBooks). */
  books: Map<number, StressBooks>;
  /** loadWorstState: each portfolio's stored worst windows up to the date before the run. */
  worst: Map<number, WorstWindows>;
}

/** A portfolio's holdings by date row, oldest first. */
export type StressBooks = Map<number, StressBook[]>;

/** The flags kept per series: 249 before the run's first tested day make a 250-day window with it. */
export const PRIOR_FLAGS = BASEL_OBSERVATIONS - 1;

/**
 * Starts the reads and returns at once; the loss stage awaits the result, where a failure
 * surfaces (until then it is not an unhandled rejection). Whoever starts it awaits it
 * before the database may be closed.
 */
export function startStoredReads(db: Database, config: Config, inputs: LossInputs): Promise<StoredLossInputs> {
  const reading = readStored(db, config, inputs);
  reading.catch(() => undefined);
  return reading;
}

/**
 * Each read on a session of its own, all started at once: a chain of reads on one
 * connection would advance only when this thread, busy with the estimates, awaits.
 */
async function readStored(db: Database, config: Config, inputs: LossInputs): Promise<StoredLossInputs> {
  const { returns, fromRow } = inputs;
  const t = returns.dates.length;
  const withinRun = fromRow >= 1 && fromRow < t;
  const bound = Math.max(0, fromRow - 2 * BASEL_OBSERVATIONS);
  const flagsSince = bound > 0 ? returns.dates[bound] : null;
  const alone = async <T,>(wanted: boolean, none: T, read: (session: Database) => Promise<T>): Promise<T> => {
    if (!wanted) return none;
    const session = await db.openSession();
    try {
      return await read(session);
    } finally {
      session.close();
    }
  };
  const [varBefore, sigmaState, priorFlags, books, worst] = await Promise.all([
    alone(withinRun, [], (s) => readVarBefore(s, inputs)),
    alone(fromRow < t, null, (s) => loadSigmaState(s, config, returns, fromRow, inputs.settings)),
    alone(withinRun, new Map<string, number[]>(), (s) => readPriorFlags(s, inputs, flagsSince, inputs.portfolios.ids)),
    alone(fromRow < t, new Map<number, StressBooks>(), (s) => readStressBooks(s, inputs)),
    alone(fromRow < t, new Map<number, WorstWindows>(), (s) => loadWorstState(s, returns.dates, fromRow, inputs.portfolios.ids, inputs.settings)),
  ]);
  return { varBefore, sigmaState, priorFlags, flagsSince, books, worst };
}

/** Every method's stored VaR of the date before the run. */
async function readVarBefore(db: Database, inputs: LossInputs): Promise<StoredLossInputs['varBefore']> {
  const { fromRow, returns, portfolios } = inputs;
  const before = await readColumns(
    db,
    `select portfolio_id, method, window_days, estimator, var_99_1d from var_daily
     where date = $1::date and list_contains(from_json($2, '["VARCHAR"]'), portfolio_id)`,
    [returns.dates[fromRow - 1], JSON.stringify(portfolios.ids)],
    { portfolio_id: 'text', method: 'text', window_days: 'int', estimator: 'text', var_99_1d: 'double' },
  );
  const index = new Map(portfolios.ids.map((id, p) => [id, p]));
  const b = before.columns;
  return Array.from({ length: before.rows }, (_, i) => ({
    key: { p: index.get(b.portfolio_id[i] as string)!, method: b.method[i] as string, windowDays: b.window_days[i], estimator: b.estimator[i] },
    var99: b.var_99_1d[i],
  }));
}

/**
 * Per series of the given portfolios, the exception flags of the last 249 tested days
 * before the run, oldest first, from `since` on (null: every date; a read of every date
 * grows with the history, so the first read is bounded and a short series read again).
 */
export async function readPriorFlags(db: Database, inputs: LossInputs, since: string | null, ids: readonly string[]): Promise<Map<string, number[]>> {
  const { fromRow, returns, portfolios } = inputs;
  const index = new Map(portfolios.ids.map((id, p) => [id, p]));
  const rows = await db.all<{ portfolio_id: string; method: string; window_days: number; estimator: string | null; flags: boolean[] }>(
    // max_by(.., n): the flags of the n latest dates, latest first (a top-n per group, no window over every row)
    `select portfolio_id, method, window_days, estimator, max_by(exception, date, $4) as flags
     from var_backtest
     where date < $1::date and ($3::date is null or date >= $3::date) and list_contains(from_json($2::varchar, '["VARCHAR"]'), portfolio_id)
     group by all`,
    [returns.dates[fromRow], JSON.stringify(ids), since, PRIOR_FLAGS],
  );
  const flags = new Map<string, number[]>();
  for (const r of rows) {
    const key = { p: index.get(r.portfolio_id)!, method: r.method, windowDays: r.window_days, estimator: r.estimator };
    flags.set(seriesId(key), r.flags.map((f) => (f ? 1 : 0)).reverse());
  }
  return flags;
}

/**
 * Per portfolio, its holdings (with the currency and asset class the hypothetical shocks
 * match on) at each date whose stress rows the run writes: its latest date of the run
 * with a positive, fully priced value, and every earlier date of the run that has stored
 * stress rows (the write step deletes the run's dates, so what it deletes is written
 * again, under the corrected data). A date no longer valued gets none.
 */
async function readStressBooks(db: Database, inputs: LossInputs): Promise<Map<number, StressBooks>> {
  const { returns, portfolios, fromRow } = inputs;
  const t = returns.dates.length;
  const valued = (p: number, d: number) => portfolios.value[p * t + d] > 0 && portfolios.unpriced[p * t + d] === 0;
  const index = new Map(portfolios.ids.map((id, p) => [id, p]));
  const rowOf = new Map(returns.dates.map((date, d) => [date, d]));
  const wanted = new Map<number, Set<number>>();
  const want = (p: number, d: number) => (wanted.get(p) ?? wanted.set(p, new Set()).get(p)!).add(d);
  for (let p = 0; p < portfolios.ids.length; p++) {
    let d = t - 1;
    while (d >= fromRow && !valued(p, d)) d--;
    if (d >= fromRow) want(p, d);
  }
  const stored = await db.all<{ portfolio_id: string; date: string }>(
    `select distinct portfolio_id, date::varchar as date from stress_results
     where date >= $1::date and list_contains(from_json($2, '["VARCHAR"]'), portfolio_id)`,
    [returns.dates[fromRow], JSON.stringify(portfolios.ids)],
  );
  for (const r of stored) {
    const p = index.get(r.portfolio_id);
    const d = rowOf.get(r.date);
    if (p !== undefined && d !== undefined && valued(p, d)) want(p, d);
  }
  const books = new Map<number, StressBooks>();
  if (wanted.size === 0) return books;
  const pairs = [...wanted].flatMap(([p, dates]) => [...dates].map((d) => [portfolios.ids[p], d + 1] as const));
  // date_index counts valuation dates from 1, the panels' rows from 0
  const rows = await db.all<{ portfolio_id: string; date_index: number; security_id: string; currency: string; is_cash: boolean; asset_class: string | null; value_base: number }>(
    `with wanted as (select unnest(from_json($1, '["VARCHAR"]')) as portfolio_id, unnest(from_json($2, '["INTEGER"]')) as date_index)
     select w.portfolio_id, w.date_index, w.security_id, w.currency, w.is_cash, s.asset_class, w.value_base::double as value_base
     -- the date-bounded twin: the plain view would value every date of the history first
     from value_weights_since($3) w
     join wanted using (portfolio_id, date_index)
     left join clean_securities s using (security_id)
     where w.value_base is not null
     order by w.portfolio_id, w.date_index, w.security_id`,
    [JSON.stringify(pairs.map(([id]) => id)), JSON.stringify(pairs.map(([, i]) => i)), Math.min(...pairs.map(([, i]) => i))],
  );
  for (const r of rows) {
    const p = index.get(r.portfolio_id)!;
    const byDate = books.get(p) ?? books.set(p, new Map()).get(p)!;
    const d = r.date_index - 1;
    const holdings = byDate.get(d) ?? byDate.set(d, []).get(d)!;
    holdings.push({ security: r.security_id, currency: r.currency, isCash: r.is_cash, assetClass: r.asset_class, valueBase: r.value_base });
  }
  return books;
}
