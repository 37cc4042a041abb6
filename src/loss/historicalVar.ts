import { filteredReturns, historicalLoss, scenarioPnlSimple } from '../risk/math/historicalSimulation.ts';
import type { PortfolioPanel, ReturnPanel } from '../risk/inputs.ts';
import type { VarRow } from './lossStage.ts';

/**
 * var_daily rows of the historical and filtered historical simulation (SPEC section 9,
 * formulas in src/risk/math/historicalSimulation.ts) for every portfolio and date of the
 * run. The holdings at the close of d are revalued under the returns of the N valuation
 * dates d-N+1 .. d; the filtered method first rescales each past return to today's EWMA
 * sigma. A holding without a return on all N dates is left out and named, and the row's
 * coverage and status say so; below `minCoverage` the figures are null.
 */

export interface HistoricalSettings {
  days: readonly number[];
  minCoverage: number;
}

export interface HistoricalInputs {
  returns: ReturnPanel;
  portfolios: PortfolioPanel;
  /** First date row of the run. */
  fromRow: number;
  /** securitySigmas(): EWMA sigma after each row, T x N. */
  sigmaAfter: Float64Array;
}

export const VAR_LEVEL = 0.99;
export const ES_LEVEL = 0.975;

/** Walks the run's dates; `emit` receives each row, and the VaR by (portfolio, method, N) for the backtest. */
export function historicalVarRows(inputs: HistoricalInputs, settings: HistoricalSettings, emit: (row: VarRow, p: number, d: number) => void): void {
  const { returns, portfolios, fromRow } = inputs;
  const t = returns.dates.length;
  const n = returns.securityIds.length;
  const longest = Math.max(...settings.days);
  // each return converted once: every portfolio and date revalues under the same scenarios
  const simple = returns.returns.map(Math.expm1);
  for (let d = Math.max(fromRow, portfolios.firstRow); d < t; d++) {
    const filtered = new FilteredCache(inputs, d, longest);
    for (let p = 0; p < portfolios.ids.length; p++) {
      const slot = p * t + d;
      if (portfolios.present[slot] === 0) continue;
      const value = portfolios.value[slot];
      const start = portfolios.offsets[slot];
      const held = portfolios.security.subarray(start, portfolios.offsets[slot + 1]);
      const values = portfolios.weight.subarray(start, start + held.length).map((w) => w * value);
      const stale = portfolios.stale[slot] === 1;
      for (const method of ['historical', 'filtered_historical'] as const) {
        for (const days of settings.days) {
          const base = { portfolioId: portfolios.ids[p], date: returns.dates[d], method, windowDays: days };
          let figures: Omit<VarRow, keyof typeof base>;
          if (portfolios.unpriced[slot] === 1 || !Number.isFinite(value)) figures = empty('unpriced', stale);
          else if (value <= 0) figures = empty('value_not_positive', stale);
          // row 0 has no return: N scenarios need N + 1 dates
          else if (d - days + 1 < 1) figures = empty('insufficient_history', stale);
          else {
            const matrix = new Float64Array(days * held.length);
            for (let a = 0; a < held.length; a++) {
              const j = held[a];
              const column = method === 'historical' ? null : filtered.column(j);
              for (let s = 0; s < days; s++) {
                const row = d - days + 1 + s;
                matrix[s * held.length + a] =
                  returns.isCash[j] === 1 ? 0 : column === null ? simple[row * n + j] : column[longest - days + s];
              }
            }
            figures = revalue(values, matrix, days, held, returns.securityIds, settings.minCoverage, stale);
          }
          emit({ ...base, ...figures }, p, d);
        }
      }
    }
  }
}

function revalue(
  values: Float64Array,
  matrix: Float64Array,
  days: number,
  held: Int32Array,
  ids: readonly string[],
  minCoverage: number,
  stale: boolean,
): Omit<VarRow, 'portfolioId' | 'date' | 'method' | 'windowDays'> {
  const { pnl, coverage, missing } = scenarioPnlSimple(values, matrix, days);
  const names = Array.from(missing, (a) => ids[held[a]]);
  if (!(coverage >= minCoverage)) return { ...empty('insufficient_history', stale), coverage, missing: names };
  const loss = historicalLoss(pnl, VAR_LEVEL, ES_LEVEL);
  return { var99: loss.var, es975: loss.es, coverage, status: withStale(coverage < 1 ? 'partial_history' : 'ok', stale), missing: names };
}

function empty(reason: string, stale: boolean): Omit<VarRow, 'portfolioId' | 'date' | 'method' | 'windowDays'> {
  return { var99: Number.NaN, es975: Number.NaN, coverage: Number.NaN, status: withStale(reason, stale), missing: [] };
}

function withStale(reason: string, stale: boolean): string {
  if (!stale) return reason;
  return reason === 'ok' ? 'stale_prices' : `${reason},stale_prices`;
}

/**
 * The filtered simple returns of one date's scenarios, per security, computed once and
 * shared by every portfolio that holds it: r*_s = r_s sigma_today / sigma_s, then
 * exp(r*) - 1. A past date without a sigma (before the security's EWMA entry) is a gap;
 * a security without a sigma today has no filtered scenario at all.
 */
class FilteredCache {
  private readonly columns = new Map<number, Float64Array>();

  constructor(
    private readonly inputs: HistoricalInputs,
    private readonly d: number,
    private readonly longest: number,
  ) {}

  /** The last `longest` scenarios ending at d (rows d - longest + 1 .. d), oldest first. */
  column(j: number): Float64Array {
    let out = this.columns.get(j);
    if (out !== undefined) return out;
    const { returns, sigmaAfter } = this.inputs;
    const n = returns.securityIds.length;
    const first = this.d - this.longest + 1;
    const past = new Float64Array(this.longest);
    const r = new Float64Array(this.longest);
    const today = sigmaAfter[this.d * n + j];
    for (let s = 0; s < this.longest; s++) {
      const row = first + s;
      const sigma = row >= 1 ? sigmaAfter[(row - 1) * n + j] : Number.NaN;
      const known = Number.isFinite(sigma) && Number.isFinite(today);
      // an unknown sigma is a gap: NaN return over a unit sigma stays NaN
      past[s] = known ? sigma : 1;
      r[s] = known && row >= 1 ? returns.returns[row * n + j] : Number.NaN;
    }
    out = filteredReturns(r, this.longest, past, Float64Array.of(Number.isFinite(today) ? today : 0)).map(Math.expm1);
    this.columns.set(j, out);
    return out;
  }
}
