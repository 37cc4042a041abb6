import type { DuckDBType } from '@duckdb/node-api';
import { BOOLEAN, DOUBLE, INTEGER, VARCHAR } from '../storage/duckdbApi.ts';
import { ChunkAppender } from '../storage/columnar.ts';
import type { Database } from '../storage/database.ts';

/**
 * The loss stage's rows go first to temporary tables, through appenders and outside
 * any transaction, like the risk stage's (src/risk/store/staging.ts); `writeLosses` swaps
 * them into var_daily, var_backtest and stress_results inside the run's one write
 * transaction. Lists (the holdings left out) are staged as text joined by '|'.
 */

export interface VarRow {
  portfolioId: string;
  date: string;
  method: 'historical' | 'filtered_historical';
  windowDays: number;
  var99: number;
  es975: number;
  coverage: number;
  status: string;
  missing: readonly string[];
}

export interface BacktestRow {
  portfolioId: string;
  date: string;
  method: string;
  windowDays: number;
  estimator: string | null;
  var99: number;
  pnl: number;
  exception: boolean;
  testedDays: number;
  exceptions: number;
  kupiecLr: number;
  kupiecP: number;
  christoffersenLr: number;
  christoffersenP: number;
  zone: string | null;
}

export interface StressRow {
  portfolioId: string;
  date: string;
  scenarioId: string;
  kind: 'historical' | 'hypothetical';
  pnlBase: number;
  pnlPct: number;
  coverage: number;
  missing: readonly string[];
  rangeFrom: string | null;
  rangeTo: string | null;
}

const TABLES: Record<'var' | 'backtest' | 'stress', { columns: string; types: DuckDBType[] }> = {
  var: {
    columns: 'portfolio_id varchar, date varchar, method varchar, window_days integer, var_99_1d double, es_975_1d double, coverage double, status varchar, missing varchar',
    types: [VARCHAR, VARCHAR, VARCHAR, INTEGER, DOUBLE, DOUBLE, DOUBLE, VARCHAR, VARCHAR],
  },
  backtest: {
    columns: `portfolio_id varchar, date varchar, method varchar, window_days integer, estimator varchar, var_99_1d double, pnl double,
      exception boolean, tested_days integer, exceptions_250 integer, kupiec_lr double, kupiec_p double,
      christoffersen_lr double, christoffersen_p double, zone varchar`,
    types: [VARCHAR, VARCHAR, VARCHAR, INTEGER, VARCHAR, DOUBLE, DOUBLE, BOOLEAN, INTEGER, INTEGER, DOUBLE, DOUBLE, DOUBLE, DOUBLE, VARCHAR],
  },
  stress: {
    columns: `portfolio_id varchar, date varchar, scenario_id varchar, kind varchar, pnl_base double, pnl_pct double, coverage double,
      missing varchar, range_from varchar, range_to varchar`,
    types: [VARCHAR, VARCHAR, VARCHAR, VARCHAR, DOUBLE, DOUBLE, DOUBLE, VARCHAR, VARCHAR, VARCHAR],
  },
};

export class LossStage {
  private constructor(
    private readonly vars: ChunkAppender,
    private readonly backtests: ChunkAppender,
    private readonly stresses: ChunkAppender,
  ) {}

  static async open(db: Database): Promise<LossStage> {
    const appenders: ChunkAppender[] = [];
    for (const [name, table] of Object.entries(TABLES)) {
      await db.run(`create or replace temp table loss_stage_${name} (${table.columns})`);
      appenders.push(await ChunkAppender.open(db, `loss_stage_${name}`, table.types));
    }
    return new LossStage(appenders[0], appenders[1], appenders[2]);
  }

  addVar(r: VarRow): void {
    row(this.vars, [r.portfolioId, r.date, r.method, r.windowDays, r.var99, r.es975, r.coverage, r.status, joined(r.missing)]);
  }

  addBacktest(r: BacktestRow): void {
    row(this.backtests, [
      r.portfolioId,
      r.date,
      r.method,
      r.windowDays,
      r.estimator,
      r.var99,
      r.pnl,
      r.exception,
      r.testedDays,
      r.exceptions,
      r.kupiecLr,
      r.kupiecP,
      r.christoffersenLr,
      r.christoffersenP,
      r.zone,
    ]);
  }

  addStress(r: StressRow): void {
    row(this.stresses, [r.portfolioId, r.date, r.scenarioId, r.kind, r.pnlBase, r.pnlPct, r.coverage, joined(r.missing), r.rangeFrom, r.rangeTo]);
  }

  /** Flushes every appender; returns the rows staged per table. */
  close(): { varRows: number; backtestRows: number; stressRows: number } {
    return { varRows: this.vars.close(), backtestRows: this.backtests.close(), stressRows: this.stresses.close() };
  }
}

function row(appender: ChunkAppender, values: (string | number | boolean | null)[]): void {
  values.forEach((v, c) => appender.set(c, v as never));
  appender.endRow();
}

function joined(ids: readonly string[]): string | null {
  return ids.length === 0 ? null : ids.join('|');
}

export interface LossScope {
  runId: number;
  /** 'YYYY-MM-DD' the run recomputed from; null: the whole history. */
  from: string | null;
  portfolios: readonly string[] | null;
  /** Portfolios whose risk the run could not compute: their stored rows stay, their staged ones are not written. */
  failed: readonly string[];
}

/**
 * Inside the run's write transaction, after risk_daily has its new rows: deletes the
 * scope's rows of the three tables, copies the normal figures from risk_daily into
 * var_daily (one table compares the methods) and inserts the staged rows.
 */
export async function writeLosses(db: Database, scope: LossScope): Promise<void> {
  // portfolio ids bound as JSON: DuckDB cannot type an empty JS list
  const notFailed = (param: string) => `not list_contains(from_json(${param}, '["VARCHAR"]'), portfolio_id)`;
  const inScope = `($1::date is null or date >= $1::date) and ($2::varchar is null or list_contains(from_json($2, '["VARCHAR"]'), portfolio_id))
    and ${notFailed('$3')}`;
  const failed = JSON.stringify(scope.failed);
  const params = [scope.from, scope.portfolios === null ? null : JSON.stringify(scope.portfolios), failed, scope.runId];
  const list = (column: string) => `case when ${column} is null then []::varchar[] else string_split(${column}, '|') end`;
  for (const table of ['var_daily', 'var_backtest', 'stress_results']) await db.run(`delete from ${table} where ${inScope}`, params.slice(0, 3));
  await db.run(
    `insert into var_daily (portfolio_id, date, method, window_days, estimator, var_99_1d, es_975_1d, coverage, status, missing, run_id)
     select portfolio_id, date, 'normal' as method, window_days, estimator, var_99_1d, es_975_1d, coverage, status,
            []::varchar[] as missing, $4 as run_id
     from risk_daily where ${inScope}
     union all by name
     select portfolio_id, date::date as date, method, window_days, null as estimator, var_99_1d, es_975_1d, coverage, status,
            ${list('missing')} as missing, $4 as run_id
     from loss_stage_var where ${notFailed('$3')}`,
    params,
  );
  await db.run(
    `insert into var_backtest by name
     select * exclude (date), date::date as date, $1 as run_id from loss_stage_backtest where ${notFailed('$2')}`,
    [scope.runId, failed],
  );
  await db.run(
    `insert into stress_results by name
     select * exclude (date, missing, range_from, range_to), date::date as date, ${list('missing')} as missing,
            range_from::date as range_from, range_to::date as range_to, $1 as run_id
     from loss_stage_stress where ${notFailed('$2')}`,
    [scope.runId, failed],
  );
}

/** Drops the stage's temporary tables (they live as long as the connection otherwise). */
export async function dropLossStage(db: Database): Promise<void> {
  for (const name of Object.keys(TABLES)) await db.run(`drop table if exists loss_stage_${name}`);
}
