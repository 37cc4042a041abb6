import type { Database } from '../../storage/database.ts';
import { readColumns, streamColumns } from '../../storage/columnar.ts';
import { ensureCapacity } from '../../storage/growable.ts';

/**
 * The risk stage's inputs, read from the views in bulk into typed arrays. Dates are
 * addressed by row d = date_index - 1 of align_valuation_dates; securities (cash
 * included) by their position j in the sorted list of every id that has a return, a
 * position or a benchmark weight. Base-currency cash and a security without returns have
 * all-NaN columns, so they never have a full window; cash in another currency has its fx
 * returns.
 */

export interface ReturnPanel {
  /** 'YYYY-MM-DD' of every valuation date, d = date_index - 1. */
  dates: string[];
  securityIds: string[];
  /**
   * 1 where security j is a balance in the base currency (CASH:<base>): zero return and
   * zero covariance. Cash in another currency has its fx returns and counts as a holding.
   */
  isCash: Uint8Array;
  /** T x N row-major log returns in base currency, NaN = missing (row 0 has none). */
  returns: Float64Array;
  /** The same, N x T: each security's series contiguous, for per-security windows. */
  returnsBySecurity: Float64Array;
  /** T x N: consecutive non-missing returns ending at row d (a window of W is full iff >= W). */
  runLength: Int32Array;
  /**
   * First date row whose returns were read (absent: 0, every row). Earlier rows are NaN
   * and their run lengths count from it: only windows that end at least their length
   * after it may be judged (readReturnPanel's caller bounds it so).
   */
  returnsFrom?: number;
}

export interface PortfolioPanel {
  ids: string[];
  /**
   * First date row whose portfolio returns were read; earlier rows are empty. The holdings
   * (present, value, flags, weights) may start later (readPortfolioPanel's holdingsFromRow).
   */
  firstRow: number;
  /** P x T, slot p * T + d. Missing = NaN / 0. */
  present: Uint8Array;
  value: Float64Array;
  unpriced: Uint8Array;
  stale: Uint8Array;
  logReturn: Float64Array;
  /** CSR over slots: holdings of slot s are offsets[s] .. offsets[s + 1] - 1, sorted by security. */
  offsets: Int32Array;
  security: Int32Array;
  weight: Float64Array;
}

/**
 * Every valuation date ('YYYY-MM-DD'), row d = date_index - 1: a run addresses dates by
 * row. The views read the derived tables: the caller refreshes them first (src/batch
 * does, as a step of its own); this only reads.
 */
export async function readValuationDates(db: Database): Promise<string[]> {
  await db.run('create or replace temp table risk_in_dates as select date, date_index from align_valuation_dates');
  const dateRows = await readColumns(db, 'select date::varchar, date_index from risk_in_dates order by date_index', undefined, {
    date: 'text',
    date_index: 'int',
  });
  const { date_index } = dateRows.columns;
  for (let d = 0; d < dateRows.rows; d++) {
    if (date_index[d] !== d + 1) throw new Error(`align_valuation_dates: date_index ${date_index[d]} at position ${d + 1}`);
  }
  return dateRows.columns.date as string[];
}

/**
 * Reads the security returns from date row `returnsFrom` on (0: every date; the caller
 * bounds it by the longest lookback before its first date, and reads from 0 when an
 * estimate must replay the whole history). The securities: for a run over every
 * portfolio, those with a return from `returnsFrom` on, a position from
 * `holdingsFromRow` on or a place in a benchmark; for a run over some portfolios (null:
 * all), only those the portfolios in scope hold from `holdingsFromRow` on and the
 * benchmarks' constituents, so a correction of one portfolio reads no other returns.
 */
export async function readReturnPanel(
  db: Database,
  dates: string[],
  holdingsFromRow: number,
  portfolios: readonly string[] | null = null,
  returnsFrom = 0,
): Promise<ReturnPanel> {
  // the date-bounded twin: the plain view would derive every date's return first
  const returnsSql = `create or replace temp table risk_in_returns as select security_id, date_index, log_return from ret_securities_since(${returnsFrom + 1})`;
  // every portfolio: the view once, its ids among the securities; some: the view for their securities only
  if (portfolios === null) await db.run(returnsSql);
  // ids bound as JSON: DuckDB cannot type an empty JS list
  await db.run(
    `create or replace temp table risk_in_securities as
     select security_id, (row_number() over (order by security_id) - 1)::integer as k
     from (
       ${portfolios === null ? 'select security_id from risk_in_returns union' : ''}
       select security_id from hold_daily_positions_since($1)
       ${portfolios === null ? '' : `where list_contains(from_json($2, '["VARCHAR"]'), portfolio_id)`}
       union select security_id from clean_benchmarks
     )`,
    portfolios === null ? [holdingsFromRow + 1] : [holdingsFromRow + 1, JSON.stringify(portfolios)],
  );
  if (portfolios !== null) await db.run(`${returnsSql} semi join risk_in_securities using (security_id)`);
  const ids = await readColumns(
    db,
    `select security_id, is_base_cash(security_id) from risk_in_securities order by k`,
    undefined,
    { security_id: 'text', is_cash: 'bool' },
  );
  const securityIds = ids.columns.security_id as string[];
  const isCash = ids.columns.is_cash;
  const t = dates.length;
  const n = securityIds.length;
  const returns = shared(Float64Array, t * n).fill(Number.NaN);
  const raw = await readColumns(
    db,
    `select s.k, r.date_index, r.log_return::double
     from risk_in_returns r join risk_in_securities s using (security_id)
     where r.date_index <= $1`,
    [t],
    { k: 'int', date_index: 'int', log_return: 'double' },
  );
  for (let i = 0; i < raw.rows; i++) returns[(raw.columns.date_index[i] - 1) * n + raw.columns.k[i]] = raw.columns.log_return[i];
  return { dates, securityIds, isCash, returns, ...seriesLayouts(returns, t, n), returnsFrom };
}

/**
 * Reads the returns of rows `firstRow` .. returnsFrom - 1 into the panel, in place, for
 * the same securities (risk_in_securities of the run), and counts the run lengths again:
 * the panel is then what readReturnPanel from `firstRow` gives. For a step that needs
 * more history than the run read (a replay, a stress range further back).
 */
export async function readEarlierReturns(db: Database, panel: ReturnPanel, firstRow: number): Promise<void> {
  const until = panel.returnsFrom ?? 0;
  if (firstRow >= until) return;
  const t = panel.dates.length;
  const n = panel.securityIds.length;
  const raw = await readReturnRows(db, firstRow, until - 1);
  const { returns, returnsBySecurity, runLength } = panel;
  for (let i = 0; i < raw.rows; i++) {
    const d = raw.columns.date_index[i] - 1;
    const j = raw.columns.k[i];
    returns[d * n + j] = raw.columns.log_return[i];
    returnsBySecurity[j * t + d] = raw.columns.log_return[i];
  }
  for (let d = firstRow; d < t; d++) {
    for (let j = 0; j < n; j++) runLength[d * n + j] = Number.isFinite(returns[d * n + j]) ? (d > 0 ? runLength[(d - 1) * n + j] : 0) + 1 : 0;
  }
  panel.returnsFrom = firstRow;
}

/**
 * The stored returns of rows firstRow .. lastRow (the panel's rows: date_index - 1) of the
 * run's securities (risk_in_securities), as (k, date_index, log_return) columns.
 */
export function readReturnRows(db: Database, firstRow: number, lastRow: number) {
  return readColumns(
    db,
    `select s.k, r.date_index, r.log_return::double
     from ret_securities_since($1) r join risk_in_securities s using (security_id)
     where r.date_index <= $2`,
    [firstRow + 1, lastRow + 1],
    { k: 'int', date_index: 'int', log_return: 'double' },
  );
}

/** From T x N returns: the same N x T (each security contiguous) and the run lengths of non-missing returns. */
export function seriesLayouts(returns: Float64Array, t: number, n: number): Pick<ReturnPanel, 'returnsBySecurity' | 'runLength'> {
  const returnsBySecurity = shared(Float64Array, n * t);
  const runLength = shared(Int32Array, t * n);
  for (let d = 0; d < t; d++) {
    for (let j = 0; j < n; j++) {
      const r = returns[d * n + j];
      returnsBySecurity[j * t + d] = r;
      runLength[d * n + j] = Number.isFinite(r) ? (d > 0 ? runLength[(d - 1) * n + j] : 0) + 1 : 0;
    }
  }
  return { returnsBySecurity, runLength };
}

/**
 * The portfolios in scope (null: every portfolio with a position), sorted by id, their
 * returns from `firstRow` on and their holdings from `holdingsFromRow` on (default: the
 * same row; a run that needs holdings only from the day before its first date reads
 * far fewer).
 */
export async function readPortfolioPanel(
  db: Database,
  dateCount: number,
  firstRow: number,
  portfolios: readonly string[] | null,
  holdingsFromRow = firstRow,
): Promise<PortfolioPanel> {
  if (holdingsFromRow < firstRow) throw new Error(`readPortfolioPanel: holdings from row ${holdingsFromRow} before the returns from row ${firstRow}`);
  // ids bound as JSON: DuckDB cannot type an empty JS list
  const scope = portfolios === null ? '' : `where list_contains(from_json($1, '["VARCHAR"]'), portfolio_id)`;
  const scopeParams = portfolios === null ? undefined : [JSON.stringify(portfolios)];
  await db.run(
    `create or replace temp table risk_in_portfolios as
     select portfolio_id, (row_number() over (order by portfolio_id) - 1)::integer as k
     from (select distinct portfolio_id from clean_snapshots ${scope})`,
    scopeParams,
  );
  const idRows = await readColumns(db, 'select portfolio_id from risk_in_portfolios order by k', undefined, { portfolio_id: 'text' });
  const ids = idRows.columns.portfolio_id as string[];
  const slots = ids.length * dateCount;
  const present = shared(Uint8Array, slots);
  const value = shared(Float64Array, slots);
  const unpriced = shared(Uint8Array, slots);
  const stale = shared(Uint8Array, slots);
  const logReturn = await readSlotSeries(
    db,
    `select p.k, r.date_index, r.log_return::double
     from ret_portfolios_since($1 + 1) r join risk_in_portfolios p using (portfolio_id)`,
    firstRow,
    slots,
    dateCount,
  );

  // One pass over value_weights gives the holdings and, per slot, the portfolio value
  // (sum of the position values, in security order so every run adds them alike),
  // whether it is unknown (the view's portfolio_value_base is null: the rule is
  // positions_value in sql/rules.sql), and whether a price is stale. Sorted by slot then
  // security, so every sum over a portfolio's holdings runs in the same order in every
  // run (full or incremental).
  const holdings = new WeightRows(1 << 16);
  const offsets = shared(Int32Array, slots + 1);
  await streamColumns(
    db,
    `select p.k, w.date_index, s.k as j, w.weight::double, w.value_base::double,
            w.portfolio_value_base is null as unvalued, w.price_status = 'stale'
     from value_weights_since($1) w
     join risk_in_portfolios p using (portfolio_id)
     -- left: a holding missing from the securities read is a fault (a null j fails the read), never dropped
     left join risk_in_securities s using (security_id)
     order by p.k, w.date_index, j`,
    [holdingsFromRow + 1],
    { k: 'int', date_index: 'int', j: 'int', weight: 'double', value_base: 'double', unvalued: 'bool', is_stale: 'bool' },
    (c, n) => {
      holdings.append(c.j, c.weight, n);
      for (let i = 0; i < n; i++) {
        const slot = c.k[i] * dateCount + c.date_index[i] - 1;
        offsets[slot + 1]++;
        present[slot] = 1;
        value[slot] += c.value_base[i];
        if (c.unvalued[i] === 1) unpriced[slot] = 1;
        if (c.is_stale[i] === 1) stale[slot] = 1;
      }
    },
  );
  for (let slot = 0; slot < slots; slot++) {
    offsets[slot + 1] += offsets[slot];
    if (present[slot] === 0 || unpriced[slot] === 1) value[slot] = Number.NaN;
  }
  return {
    ids,
    firstRow,
    present,
    value,
    unpriced,
    stale,
    logReturn,
    offsets,
    ...holdings.taken(),
  };
}

/**
 * The rows (k, date_index, log_return) of `sql` (one parameter: the first row) laid out
 * K x T in a shared array, slot k * T + date_index - 1; NaN where no row is.
 */
export async function readSlotSeries(db: Database, sql: string, firstRow: number, slots: number, dateCount: number): Promise<Float64Array> {
  const series = shared(Float64Array, slots).fill(Number.NaN);
  const rows = await readColumns(db, sql, [firstRow], { k: 'int', date_index: 'int', log_return: 'double' });
  for (let i = 0; i < rows.rows; i++) series[rows.columns.k[i] * dateCount + rows.columns.date_index[i] - 1] = rows.columns.log_return[i];
  return series;
}

type SharedTyped = Uint8Array | Int32Array | Float64Array;

/**
 * A zero-filled typed array on a SharedArrayBuffer: the big panels are read by the
 * estimate worker threads in place, never copied to them.
 */
export function shared<A extends SharedTyped>(kind: { new (buffer: SharedArrayBuffer): A; BYTES_PER_ELEMENT: number }, length: number): A {
  return new kind(new SharedArrayBuffer(length * kind.BYTES_PER_ELEMENT));
}

/** (security, weight) rows in shared arrays, appended a chunk at a time: the values of a CSR layout. */
export class WeightRows {
  private security: Int32Array;
  private weight: Float64Array;
  private rows = 0;

  constructor(capacity: number) {
    this.security = shared(Int32Array, capacity);
    this.weight = shared(Float64Array, capacity);
  }

  append(j: Int32Array, w: Float64Array, n: number): void {
    this.security = ensureCapacity(this.security, this.rows, this.rows + n, (size) => shared(Int32Array, size));
    this.weight = ensureCapacity(this.weight, this.rows, this.rows + n, (size) => shared(Float64Array, size));
    this.security.set(j.subarray(0, n), this.rows);
    this.weight.set(w.subarray(0, n), this.rows);
    this.rows += n;
  }

  taken(): { security: Int32Array; weight: Float64Array } {
    return { security: this.security.subarray(0, this.rows), weight: this.weight.subarray(0, this.rows) };
  }
}
