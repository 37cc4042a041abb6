import { DOUBLE, INTEGER, VARCHAR } from '../../storage/duckdbApi.ts';
import type { Database } from '../../storage/database.ts';
import { ChunkAppender, type ColumnSource } from '../../storage/columnar.ts';
import { ACTIVE_VALUES, CONTRIBUTION_VALUES, DAILY_FIGURES, VOL_CHANGE_FIGURES, VOL_CHANGE_SECURITY_VALUES } from '../walk/figures.ts';
import type { PortfolioFailure, ResultBatch, SecurityRows } from '../walk/resultColumns.ts';

/**
 * Results go first to temporary staging tables, through appenders and outside any
 * transaction (a long backfill must not hold a transaction open while it computes).
 * `replaceResults` then swaps them into risk_daily, risk_contributions and
 * security_stats inside the run's one write transaction. Portfolios, dates and
 * securities are staged as integers and resolved through the risk_in_* tables that
 * inputs.ts created.
 */

export class ResultStage {
  /** By portfolio (p): its earliest failure over every estimate, the one it is reported by. */
  readonly failures = new Map<number, PortfolioFailure>();

  private constructor(
    private readonly daily: ChunkAppender,
    private readonly contributions: ChunkAppender,
    private readonly active: ChunkAppender,
    private readonly securities: ChunkAppender,
    private readonly volChange: ChunkAppender,
    private readonly volChangeSecurities: ChunkAppender,
  ) {}

  static async open(db: Database): Promise<ResultStage> {
    await db.run(`create or replace temp table risk_stage_daily (
      p integer, date_index integer, window_days integer, estimator varchar,
      ${DAILY_FIGURES.map((c) => `${c} double`).join(', ')},
      status varchar, n_holdings integer, n_covered integer)`);
    await db.run(`create or replace temp table risk_stage_contributions (
      p integer, date_index integer, window_days integer, estimator varchar, j integer,
      ${CONTRIBUTION_VALUES.map((c) => `${c} double`).join(', ')})`);
    await db.run(`create or replace temp table risk_stage_active (
      p integer, date_index integer, window_days integer, estimator varchar, j integer,
      ${ACTIVE_VALUES.map((c) => `${c} double`).join(', ')})`);
    await db.run(`create or replace temp table risk_stage_securities (
      date_index integer, window_days integer, j integer, ann_return double, ann_vol double)`);
    await db.run(`create or replace temp table risk_stage_vol_change (
      p integer, date_index integer, window_days integer, estimator varchar,
      ${VOL_CHANGE_FIGURES.map((c) => `${c} double`).join(', ')}, status varchar, driver integer)`);
    await db.run(`create or replace temp table risk_stage_vol_change_securities (
      p integer, date_index integer, window_days integer, estimator varchar, j integer,
      ${VOL_CHANGE_SECURITY_VALUES.map((c) => `${c} double`).join(', ')})`);
    const figures = DAILY_FIGURES.map(() => DOUBLE);
    return new ResultStage(
      await ChunkAppender.open(db, 'risk_stage_daily', [INTEGER, INTEGER, INTEGER, VARCHAR, ...figures, VARCHAR, INTEGER, INTEGER]),
      await ChunkAppender.open(db, 'risk_stage_contributions', [INTEGER, INTEGER, INTEGER, VARCHAR, INTEGER, ...CONTRIBUTION_VALUES.map(() => DOUBLE)]),
      await ChunkAppender.open(db, 'risk_stage_active', [INTEGER, INTEGER, INTEGER, VARCHAR, INTEGER, ...ACTIVE_VALUES.map(() => DOUBLE)]),
      await ChunkAppender.open(db, 'risk_stage_securities', [INTEGER, INTEGER, INTEGER, DOUBLE, DOUBLE]),
      await ChunkAppender.open(db, 'risk_stage_vol_change', [INTEGER, INTEGER, INTEGER, VARCHAR, ...VOL_CHANGE_FIGURES.map(() => DOUBLE), VARCHAR, INTEGER]),
      await ChunkAppender.open(db, 'risk_stage_vol_change_securities', [INTEGER, INTEGER, INTEGER, VARCHAR, INTEGER, ...VOL_CHANGE_SECURITY_VALUES.map(() => DOUBLE)]),
    );
  }

  /** Appends a batch of an estimate's rows (from the main thread's walk or a worker's). */
  append(batch: ResultBatch): void {
    const { windowDays, estimator, statuses, daily, contributions: c, active: a, securities: s, volChange: v, volChangeSecurities: vs } = batch;
    for (const f of batch.failures) {
      const known = this.failures.get(f.portfolio);
      // the earliest, then by text: batches from worker threads arrive in any order
      if (!known || f.row < known.row || (f.row === known.row && f.message < known.message)) this.failures.set(f.portfolio, f);
    }
    const window = { constant: windowDays };
    const kind = { constant: estimator };
    this.daily.appendColumns(daily.rows, [
      daily.portfolio,
      dateIndexOf(daily.row, daily.rows),
      window,
      kind,
      ...daily.figures,
      { codes: daily.status, texts: statuses },
      daily.nHoldings,
      daily.nCovered,
    ]);
    appendSecurityRows(this.contributions, c, window, kind);
    appendSecurityRows(this.active, a, window, kind);
    this.securities.appendColumns(s.rows, [dateIndexOf(s.row, s.rows), window, s.security, s.annReturn, s.annVol]);
    this.volChange.appendColumns(v.rows, [
      v.portfolio,
      dateIndexOf(v.row, v.rows),
      window,
      kind,
      ...v.figures,
      { codes: v.status, texts: statuses },
      v.driver,
    ]);
    appendSecurityRows(this.volChangeSecurities, vs, window, kind);
  }

  get dailyRows(): number {
    return this.daily.rows;
  }

  /** Flushes every appender; returns the risk_daily rows staged. */
  close(): number {
    this.contributions.close();
    this.active.close();
    this.securities.close();
    this.volChange.close();
    this.volChangeSecurities.close();
    return this.daily.close();
  }

  /** After `close`: drops the rows staged for the failed portfolios (a failure may come after some of their dates); returns the risk_daily rows left. */
  async dropFailed(db: Database): Promise<number> {
    if (this.failures.size === 0) return this.daily.rows;
    return dropStagedPortfolios(db, [...this.failures.keys()]);
  }
}

/** Drops the rows staged for portfolios (panel indices) that will not be written; returns the risk_daily rows left. */
export async function dropStagedPortfolios(db: Database, portfolios: readonly number[]): Promise<number> {
  const failed = `(${portfolios.map((p) => Math.trunc(p)).join(', ')})`;
  for (const table of ['daily', 'contributions', 'active', 'vol_change', 'vol_change_securities']) {
    await db.run(`delete from risk_stage_${table} where p in ${failed}`);
  }
  const [{ n }] = await db.all<{ n: number }>('select count(*)::integer as n from risk_stage_daily');
  return n;
}

/** A (portfolio, date, window, estimator, security, values...) staging table from one kind of SecurityRows. */
function appendSecurityRows(to: ChunkAppender, part: SecurityRows, window: ColumnSource, kind: ColumnSource): void {
  to.appendColumns(part.rows, [part.portfolio, dateIndexOf(part.row, part.rows), window, kind, part.security, ...part.values]);
}

/** date_index (= row + 1, as align_valuation_dates numbers the dates) of each row. */
function dateIndexOf(rows: Int32Array, count: number): Int32Array {
  const out = new Int32Array(count);
  for (let i = 0; i < count; i++) out[i] = rows[i] + 1;
  return out;
}

export interface ReplaceScope {
  runId: number;
  from: string | null;
  portfolios: readonly string[] | null;
  /** 'latest': a portfolio's contributions are only those of its latest date. */
  contributions: 'latest' | 'all';
  /** Portfolios whose compute failed (nothing staged for them): their stored rows stay as they are. */
  failed: readonly string[];
}

/** Inside the write transaction: delete the scope's old rows (but a failed portfolio's), insert the staged ones. */
export async function replaceResults(db: Database, scope: ReplaceScope): Promise<void> {
  // portfolio ids bound as JSON: DuckDB cannot type an empty JS list
  const inScope = `($1::date is null or date >= $1::date) and ($2::varchar is null or list_contains(from_json($2, '["VARCHAR"]'), portfolio_id))
    and not list_contains(from_json($3, '["VARCHAR"]'), portfolio_id)`;
  const params = [scope.from, scope.portfolios === null ? null : JSON.stringify(scope.portfolios), JSON.stringify(scope.failed)];
  await db.run(`delete from risk_daily where ${inScope}`, params);
  await db.run(
    `insert into risk_daily (portfolio_id, date, window_days, estimator, ${DAILY_FIGURES.join(', ')}, status, n_holdings, n_covered, benchmark_id, run_id)
     select p.portfolio_id, d.date, s.window_days, s.estimator, ${DAILY_FIGURES.map((c) => `s.${c}`).join(', ')},
            s.status, s.n_holdings, s.n_covered, pb.benchmark_id, $1
     from risk_stage_daily s
     join risk_in_portfolios p on p.k = s.p
     join risk_in_dates d on d.date_index = s.date_index
     left join risk_in_portfolio_benchmarks pb on pb.portfolio_id = p.portfolio_id`,
    [scope.runId],
  );
  for (const table of ['risk_contributions', 'risk_active_contributions']) {
    if (scope.contributions === 'all') {
      await db.run(`delete from ${table} where ${inScope}`, params);
    } else {
      await db.run(`delete from ${table} where portfolio_id in (
        select p.portfolio_id from risk_stage_daily s join risk_in_portfolios p on p.k = s.p)`);
    }
  }
  await db.run(
    `insert into risk_contributions (portfolio_id, date, window_days, estimator, security_id, weight, mcr, ccr, pct, run_id)
     select p.portfolio_id, d.date, s.window_days, s.estimator, sec.security_id, s.weight, s.mcr, s.ccr, s.pct, $1
     from risk_stage_contributions s
     join risk_in_portfolios p on p.k = s.p
     join risk_in_dates d on d.date_index = s.date_index
     join risk_in_securities sec on sec.k = s.j`,
    [scope.runId],
  );
  await db.run(
    `insert into risk_active_contributions (portfolio_id, date, window_days, estimator, benchmark_id, security_id,
       weight, benchmark_weight, active_weight, mcr, ccr, pct, run_id)
     select p.portfolio_id, d.date, s.window_days, s.estimator, pb.benchmark_id, sec.security_id,
            s.weight, s.benchmark_weight, s.weight - s.benchmark_weight, s.mcr, s.ccr, s.pct, $1
     from risk_stage_active s
     join risk_in_portfolios p on p.k = s.p
     join risk_in_portfolio_benchmarks pb on pb.portfolio_id = p.portfolio_id
     join risk_in_dates d on d.date_index = s.date_index
     join risk_in_securities sec on sec.k = s.j`,
    [scope.runId],
  );
  await replaceVolChange(db, scope, inScope, params);
  // a run over some portfolios read only their securities' returns: it replaces the stats
  // of those, and drops those of a security no longer held anywhere (a full run would have
  // none); the other securities' stats stay, their returns unchanged
  await db.run(
    `delete from security_stats
     where ($1::date is null or date >= $1::date)
       and ($2::boolean or security_id in (select security_id from risk_in_securities)
            or security_id not in (select security_id from derived_held_securities))`,
    [scope.from, scope.portfolios === null],
  );
  await db.run(
    `insert into security_stats (date, window_days, security_id, ann_return, ann_vol, run_id)
     select d.date, s.window_days, sec.security_id, s.ann_return, s.ann_vol, $1
     from risk_stage_securities s
     join risk_in_dates d on d.date_index = s.date_index
     join risk_in_securities sec on sec.k = s.j`,
    [scope.runId],
  );
}

/** vol_change in the scope; vol_change_securities, like risk_contributions, for the dates it keeps. */
async function replaceVolChange(db: Database, scope: ReplaceScope, inScope: string, params: (string | null)[]): Promise<void> {
  await db.run(`delete from vol_change where ${inScope}`, params);
  await db.run(
    `insert into vol_change (portfolio_id, date, window_days, estimator, prev_date, ${VOL_CHANGE_FIGURES.join(', ')}, status, weights_driver_security_id, run_id)
     select p.portfolio_id, d.date, s.window_days, s.estimator, prev.date, ${VOL_CHANGE_FIGURES.map((c) => `s.${c}`).join(', ')},
            s.status, sec.security_id, $1
     from risk_stage_vol_change s
     join risk_in_portfolios p on p.k = s.p
     join risk_in_dates d on d.date_index = s.date_index
     join risk_in_dates prev on prev.date_index = s.date_index - 1
     left join risk_in_securities sec on sec.k = s.driver`,
    [scope.runId],
  );
  if (scope.contributions === 'all') {
    await db.run(`delete from vol_change_securities where ${inScope}`, params);
  } else {
    await db.run(`delete from vol_change_securities where portfolio_id in (
      select p.portfolio_id from risk_stage_daily s join risk_in_portfolios p on p.k = s.p)`);
  }
  await db.run(
    `insert into vol_change_securities (portfolio_id, date, window_days, estimator, security_id, weight_prev, weight_now, from_weights, run_id)
     select p.portfolio_id, d.date, s.window_days, s.estimator, sec.security_id, s.weight_prev, s.weight_now, s.from_weights, $1
     from risk_stage_vol_change_securities s
     join risk_in_portfolios p on p.k = s.p
     join risk_in_dates d on d.date_index = s.date_index
     join risk_in_securities sec on sec.k = s.j`,
    [scope.runId],
  );
}

/** Drops the run's temporary tables (they live as long as the connection otherwise). */
export async function dropStaging(db: Database): Promise<void> {
  for (const table of [
    'risk_stage_daily',
    'risk_stage_contributions',
    'risk_stage_active',
    'risk_stage_securities',
    'risk_stage_vol_change',
    'risk_stage_vol_change_securities',
    'risk_in_dates',
    'risk_in_returns',
    'risk_in_securities',
    'risk_in_portfolios',
    'risk_in_portfolio_benchmarks',
    'risk_in_benchmarks',
  ]) {
    await db.run(`drop table if exists ${table}`);
  }
}
