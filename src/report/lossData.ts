import type { Database } from '../storage/database.ts';

/** What the report's loss section shows: var_daily by method, the backtests, the stress table. */

export interface MethodFigure {
  method: string;
  window_days: number;
  estimator: string | null;
  var_99_1d: number | null;
  es_975_1d: number | null;
  coverage: number | null;
  status: string;
}

export interface BacktestState {
  method: string;
  window_days: number;
  estimator: string | null;
  date: string;
  tested_days: number;
  exceptions_250: number;
  kupiec_lr: number;
  kupiec_p: number;
  christoffersen_p: number | null;
  zone: string | null;
}

export interface BacktestPoint {
  date: string;
  pnl: number;
  var_99_1d: number;
  exception: boolean;
}

export interface StressFigure {
  date: string;
  scenario_id: string;
  kind: string;
  pnl_base: number | null;
  pnl_pct: number | null;
  coverage: number | null;
  missing: string[];
  range_from: string | null;
  range_to: string | null;
}

export interface LossData {
  methods: MethodFigure[];
  backtests: BacktestState[];
  /** The backtest drawn as a chart: the normal VaR of the focus window (sample). */
  chart: { window: number; points: BacktestPoint[] };
  stress: StressFigure[];
}

/** normal, historical, filtered historical; within a method by window, a window's estimators side by side, the EWMA (window 0) last. */
const SERIES_ORDER = `case method when 'normal' then 0 when 'historical' then 1 else 2 end, window_days = 0, window_days, estimator`;

export async function loadLossData(db: Database, portfolioId: string, asOf: string, focusWindow: number, chartFrom: string): Promise<LossData> {
  const methods = await db.all<MethodFigure>(
    `select method, window_days, estimator, var_99_1d, es_975_1d, coverage, status from var_daily
     where portfolio_id = $1 and date = $2
     order by ${SERIES_ORDER}`,
    [portfolioId, asOf],
  );
  const backtests = await db.all<BacktestState>(
    `select method, window_days, estimator, max(date) as date, arg_max(tested_days, date) as tested_days,
            arg_max(exceptions_250, date) as exceptions_250, arg_max(kupiec_lr, date) as kupiec_lr, arg_max(kupiec_p, date) as kupiec_p,
            arg_max(christoffersen_p, date) as christoffersen_p, arg_max(zone, date) as zone
     from var_backtest where portfolio_id = $1 and date <= $2
     group by method, window_days, estimator
     order by ${SERIES_ORDER}`,
    [portfolioId, asOf],
  );
  const points = await db.all<BacktestPoint>(
    `select date, pnl, var_99_1d, exception from var_backtest
     where portfolio_id = $1 and method = 'normal' and window_days = $2 and estimator = 'sample' and date >= $3 and date <= $4
     order by date`,
    [portfolioId, focusWindow, chartFrom, asOf],
  );
  const stress = await db.all<StressFigure>(
    `select date, scenario_id, kind, pnl_base, pnl_pct, coverage, missing, range_from, range_to from stress_results
     where portfolio_id = $1 and date = (select max(date) from stress_results where portfolio_id = $1 and date <= $2)
     order by starts_with(scenario_id, 'worst_'), length(scenario_id), scenario_id`,
    [portfolioId, asOf],
  );
  return { methods, backtests, chart: { window: focusWindow, points }, stress };
}
