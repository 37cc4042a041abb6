import { BacktestWindow, exceptions } from '../risk/math/backtest.ts';
import type { PortfolioPanel } from '../risk/inputs/panels.ts';
import type { BacktestRow } from './lossStage.ts';
import { VAR_LEVEL, type LossFailure } from './historicalVar.ts';

/**
 * var_backtest rows (SPEC section 9, formulas in src/risk/math/backtest.ts): each
 * method's 1-day 99% VaR at the close of d-1 against the holdings P&L of d, the value at
 * d-1 times the simple holdings return of d (so deposits and withdrawals are no P&L).
 * A day without a predicted VaR or without a P&L is not tested (no row), never a pass.
 */

export interface VarSeriesKey {
  p: number;
  method: string;
  windowDays: number;
  estimator: string | null;
}

/** The predicted VaR of each series by date row (NaN: none), filled from the run and the stored day before it. */
export class VarHistory {
  readonly series = new Map<string, VarSeriesKey & { var99: Float64Array }>();

  constructor(private readonly dateCount: number) {}

  set(key: VarSeriesKey, d: number, var99: number): void {
    const id = seriesId(key);
    let entry = this.series.get(id);
    if (entry === undefined) this.series.set(id, (entry = { ...key, var99: new Float64Array(this.dateCount).fill(Number.NaN) }));
    entry.var99[d] = var99;
  }
}

export function seriesId(key: VarSeriesKey): string {
  return `${key.p}|${key.method}|${key.windowDays}|${key.estimator ?? ''}`;
}

/**
 * Tests every date of the run from `fromRow` on. `priorFlags` holds, per series, the
 * exception flags of the tested days before the run (oldest first, at most 249), so
 * the 250-day count continues across runs.
 */
export function backtestRows(
  history: VarHistory,
  portfolios: PortfolioPanel,
  dates: readonly string[],
  fromRow: number,
  priorFlags: ReadonlyMap<string, readonly number[]>,
  emit: (row: BacktestRow) => void,
  fail: (failure: LossFailure) => void,
): void {
  for (const [id, series] of history.series) {
    try {
      backtestSeries(series, portfolios, dates, fromRow, priorFlags.get(id) ?? [], emit);
    } catch (err) {
      fail({ p: series.p, d: fromRow, message: `VaR backtest: ${err instanceof Error ? err.message : String(err)}` });
    }
  }
}

/** One series' rows. */
function backtestSeries(
  series: VarSeriesKey & { var99: Float64Array },
  portfolios: PortfolioPanel,
  dates: readonly string[],
  fromRow: number,
  priorFlags: readonly number[],
  emit: (row: BacktestRow) => void,
): void {
  const t = dates.length;
  const window = new BacktestWindow();
  for (const flag of priorFlags) window.push(flag);
  for (let d = Math.max(fromRow, 1); d < t; d++) {
    const predicted = series.var99[d - 1];
    const pnl = portfolios.value[series.p * t + d - 1] * Math.expm1(portfolios.logReturn[series.p * t + d]);
    if (!Number.isFinite(predicted) || !Number.isFinite(pnl)) continue;
    const exception = exceptions(Float64Array.of(pnl), Float64Array.of(predicted))[0];
    window.push(exception);
    const summary = window.summary(VAR_LEVEL);
    emit({
      portfolioId: portfolios.ids[series.p],
      date: dates[d],
      method: series.method,
      windowDays: series.windowDays,
      estimator: series.estimator,
      var99: predicted,
      pnl,
      exception: exception === 1,
      testedDays: summary.days,
      exceptions: summary.exceptions,
      kupiecLr: summary.kupiec.lr,
      kupiecP: summary.kupiec.p,
      christoffersenLr: summary.independence?.lr ?? Number.NaN,
      christoffersenP: summary.independence?.p ?? Number.NaN,
      zone: summary.zone,
    });
  }
}
