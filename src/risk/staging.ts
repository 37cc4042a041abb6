import { DOUBLE, INTEGER, VARCHAR } from '@duckdb/node-api';
import type { Database } from '../storage/database.ts';
import { ChunkAppender } from './columnar.ts';
import { CONTRIBUTION_VALUE_COUNT, DAILY_FIGURE_COUNT, type ResultBatch } from './resultColumns.ts';

/**
 * Results go first to temporary staging tables, through appenders and outside any
 * transaction (a long backfill must not hold a transaction open while it computes).
 * `replaceResults` then swaps them into risk_daily, risk_contributions and
 * security_stats inside the run's one write transaction. Portfolios, dates and
 * securities are staged as integers and resolved through the risk_in_* tables that
 * inputs.ts created.
 */

const DAILY_FIGURES = [
  'portfolio_value',
  'vol_ex_ante',
  'vol_realized',
  'ann_return',
  'var_99_1d',
  'es_975_1d',
  'var_99_10d',
  'es_975_10d',
  'diversification_ratio',
  'coverage',
] as const;

export class ResultStage {
  private constructor(
    private readonly daily: ChunkAppender,
    private readonly contributions: ChunkAppender,
    private readonly securities: ChunkAppender,
  ) {}

  static async open(db: Database): Promise<ResultStage> {
    await db.run(`create or replace temp table risk_stage_daily (
      p integer, date_index integer, window_days integer, estimator varchar,
      ${DAILY_FIGURES.map((c) => `${c} double`).join(', ')},
      status varchar, n_holdings integer, n_covered integer)`);
    await db.run(`create or replace temp table risk_stage_contributions (
      p integer, date_index integer, window_days integer, estimator varchar, j integer,
      weight double, mcr double, ccr double, pct double)`);
    await db.run(`create or replace temp table risk_stage_securities (
      date_index integer, window_days integer, j integer, ann_return double, ann_vol double)`);
    const figures = DAILY_FIGURES.map(() => DOUBLE);
    return new ResultStage(
      await ChunkAppender.open(db, 'risk_stage_daily', [INTEGER, INTEGER, INTEGER, VARCHAR, ...figures, VARCHAR, INTEGER, INTEGER]),
      await ChunkAppender.open(db, 'risk_stage_contributions', [INTEGER, INTEGER, INTEGER, VARCHAR, INTEGER, DOUBLE, DOUBLE, DOUBLE, DOUBLE]),
      await ChunkAppender.open(db, 'risk_stage_securities', [INTEGER, INTEGER, INTEGER, DOUBLE, DOUBLE]),
    );
  }

  /** Appends a batch of an estimate's rows (from the main thread's walk or a worker's). */
  append(batch: ResultBatch): void {
    const { windowDays, estimator, statuses, daily, contributions, securities } = batch;
    const a = this.daily;
    for (let i = 0; i < daily.rows; i++) {
      a.set(0, daily.portfolio[i]);
      a.set(1, daily.row[i] + 1);
      a.set(2, windowDays);
      a.set(3, estimator);
      for (let c = 0; c < DAILY_FIGURE_COUNT; c++) a.set(4 + c, daily.figures[i * DAILY_FIGURE_COUNT + c]);
      a.set(14, statuses[daily.status[i]]);
      a.set(15, daily.nHoldings[i]);
      a.set(16, daily.nCovered[i]);
      a.endRow();
    }
    const b = this.contributions;
    for (let i = 0; i < contributions.rows; i++) {
      b.set(0, contributions.portfolio[i]);
      b.set(1, contributions.row[i] + 1);
      b.set(2, windowDays);
      b.set(3, estimator);
      b.set(4, contributions.security[i]);
      for (let c = 0; c < CONTRIBUTION_VALUE_COUNT; c++) b.set(5 + c, contributions.values[i * CONTRIBUTION_VALUE_COUNT + c]);
      b.endRow();
    }
    const s = this.securities;
    for (let i = 0; i < securities.rows; i++) {
      s.set(0, securities.row[i] + 1);
      s.set(1, windowDays);
      s.set(2, securities.security[i]);
      s.set(3, securities.annReturn[i]);
      s.set(4, securities.annVol[i]);
      s.endRow();
    }
  }

  get dailyRows(): number {
    return this.daily.rows;
  }

  /** Flushes every appender; returns the risk_daily rows staged. */
  close(): number {
    this.contributions.close();
    this.securities.close();
    return this.daily.close();
  }
}

export interface ReplaceScope {
  runId: number;
  from: string | null;
  portfolios: readonly string[] | null;
  /** 'latest': a portfolio's contributions are only those of its latest date. */
  contributions: 'latest' | 'all';
}

/** Inside the write transaction: delete the scope's old rows, insert the staged ones. */
export async function replaceResults(db: Database, scope: ReplaceScope): Promise<void> {
  // portfolio ids bound as JSON: DuckDB cannot type an empty JS list
  const inScope = `($1::date is null or date >= $1::date) and ($2::varchar is null or list_contains(from_json($2, '["VARCHAR"]'), portfolio_id))`;
  const params = [scope.from, scope.portfolios === null ? null : JSON.stringify(scope.portfolios)];
  await db.run(`delete from risk_daily where ${inScope}`, params);
  await db.run(
    `insert into risk_daily (portfolio_id, date, window_days, estimator, ${DAILY_FIGURES.join(', ')}, status, n_holdings, n_covered, run_id)
     select p.portfolio_id, d.date, s.window_days, s.estimator, ${DAILY_FIGURES.map((c) => `s.${c}`).join(', ')},
            s.status, s.n_holdings, s.n_covered, $1
     from risk_stage_daily s
     join risk_in_portfolios p on p.k = s.p
     join risk_in_dates d on d.date_index = s.date_index`,
    [scope.runId],
  );
  if (scope.contributions === 'all') {
    await db.run(`delete from risk_contributions where ${inScope}`, params);
  } else {
    await db.run(`delete from risk_contributions where portfolio_id in (
      select p.portfolio_id from risk_stage_daily s join risk_in_portfolios p on p.k = s.p)`);
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
  await db.run('delete from security_stats where ($1::date is null or date >= $1::date)', [scope.from]);
  await db.run(
    `insert into security_stats (date, window_days, security_id, ann_return, ann_vol, run_id)
     select d.date, s.window_days, sec.security_id, s.ann_return, s.ann_vol, $1
     from risk_stage_securities s
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
    'risk_stage_securities',
    'risk_in_dates',
    'risk_in_returns',
    'risk_in_securities',
    'risk_in_portfolios',
  ]) {
    await db.run(`drop table if exists ${table}`);
  }
}
