import { filteredReturns, historicalLoss, isScenarioReturn, scenarioPnlAt, type ScenarioPnl } from '../risk/math/historicalSimulation.ts';
import { portfolioFault } from '../faults.ts';
import type { PortfolioPanel, ReturnPanel } from '../risk/inputs/panels.ts';
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
  /** One past the last date row to walk; absent: to the last date. */
  toRow?: number;
  /** Each security's EWMA sigma after each row, T x N (the square root of continueSecurityVariances). */
  sigmaAfter: Float64Array;
}

type Method = VarRow['method'];
const METHODS: readonly Method[] = ['historical', 'filtered_historical'];

export const VAR_LEVEL = 0.99;
export const ES_LEVEL = 0.975;

/** A portfolio whose loss figures could not be computed: at row d, with the error's text. */
export interface LossFailure {
  p: number;
  d: number;
  message: string;
}

/**
 * Walks the run's dates (or rows fromRow .. toRow - 1 of them, a part of the run);
 * `emit` receives each row, and the VaR by (portfolio, method, N) for the backtest. A
 * portfolio whose rows throw goes to `fail` and is left out from then on; the others go on.
 */
export function historicalVarRows(
  inputs: HistoricalInputs,
  settings: HistoricalSettings,
  emit: (row: VarRow, p: number, d: number) => void,
  fail: (failure: LossFailure) => void,
): void {
  const { returns, portfolios, fromRow } = inputs;
  const t = returns.dates.length;
  const endRow = inputs.toRow ?? t;
  const days = [...settings.days].sort((a, b) => b - a);
  const longest = days[0];
  // each return the run's scenarios use converted once, by security: every portfolio and
  // date revalues under them; only the rows from the first scenario on are kept (a new
  // day's buffers do not grow with the history): security j's row r at j * rows + r - firstScenario
  const firstDate = Math.max(fromRow, portfolios.firstRow);
  const firstScenario = Math.max(0, firstDate - longest + 1);
  const rows = Math.max(0, t - firstScenario);
  const simple = new Float64Array(rows * returns.securityIds.length);
  // gaps[j (rows + 1) + r - firstScenario]: the rows from the first scenario row before r
  // without a return, so a lookback's gaps are one difference
  const gaps = new Int32Array((rows + 1) * returns.securityIds.length);
  for (let j = 0; j < returns.securityIds.length; j++) {
    for (let r = 0; r < rows; r++) {
      simple[j * rows + r] = Math.expm1(returns.returnsBySecurity[j * t + firstScenario + r]);
      gaps[j * (rows + 1) + r + 1] = gaps[j * (rows + 1) + r] + (isScenarioReturn(simple[j * rows + r]) ? 0 : 1);
    }
  }
  const filtered = new FilteredScenarios(inputs, longest, firstScenario);
  let at = new Int32Array(0);
  let full = new Uint8Array(0);
  let values = new Float64Array(0);
  /** Whether holding a (security j) has a return in each of the n scenarios ending at d. */
  const complete = (method: Method, j: number, d: number, n: number) =>
    method === 'historical' ? gaps[j * (rows + 1) + d + 1 - firstScenario] === gaps[j * (rows + 1) + d + 1 - n - firstScenario] : filtered.lastGap(j) < longest - n;
  const rowsAt = (p: number, d: number) => {
    const slot = p * t + d;
    const value = portfolios.value[slot];
    const start = portfolios.offsets[slot];
    const held = portfolios.security.subarray(start, portfolios.offsets[slot + 1]);
    const h = held.length;
    if (values.length < h) [values, at, full] = [new Float64Array(h), new Int32Array(h), new Uint8Array(h)];
    for (let a = 0; a < h; a++) values[a] = portfolios.weight[start + a] * value;
    const stale = portfolios.stale[slot] === 1;
    const reason = portfolios.unpriced[slot] === 1 || !Number.isFinite(value) ? 'unpriced' : value <= 0 ? 'value_not_positive' : null;
    // row 0 has no return: N scenarios need N + 1 dates
    const usable = reason === null ? days.filter((n) => d - n + 1 >= 1) : [];
    for (const method of METHODS) {
      const source = method === 'historical' ? simple : filtered.scenarios;
      if (usable.length > 0) {
        // where each holding's scenarios of the longest lookback start in `source`, oldest
        // first (a shorter lookback is their tail); cash in the base currency never moves
        const n = usable[0];
        for (let a = 0; a < h; a++) {
          const j = held[a];
          at[a] = returns.isCash[j] === 1 ? -1 : method === 'historical' ? j * rows + d - n + 1 - firstScenario : filtered.columnStart(j) + longest - n;
        }
      }
      let widest: ScenarioPnl | null = null;
      for (const n of days) {
        const base = { portfolioId: portfolios.ids[p], date: returns.dates[d], method, windowDays: n };
        if (reason !== null || !usable.includes(n)) {
          emit({ ...base, ...empty(reason ?? 'insufficient_history', stale) }, p, d);
          continue;
        }
        // with nothing missing over the longest lookback, a shorter one is the tail of its P&L
        let result: ScenarioPnl;
        if (widest !== null && widest.missing.length === 0) result = { ...widest, pnl: widest.pnl.subarray(usable[0] - n) };
        else {
          for (let a = 0; a < h; a++) full[a] = at[a] < 0 || complete(method, held[a], d, n) ? 1 : 0;
          const layout = { at: at.subarray(0, h), stride: 1, first: usable[0] - n, full: full.subarray(0, h) };
          result = scenarioPnlAt(values.subarray(0, h), source, layout, n);
        }
        widest ??= result;
        emit({ ...base, ...figures(result, held, returns.securityIds, settings.minCoverage, stale) }, p, d);
      }
    }
  };
  const failed = new Uint8Array(portfolios.ids.length);
  for (let d = firstDate; d < endRow; d++) {
    filtered.moveTo(d);
    for (let p = 0; p < portfolios.ids.length; p++) {
      if (portfolios.present[p * t + d] === 0 || failed[p] === 1) continue;
      try {
        portfolioFault(portfolios.ids[p], 'loss');
        rowsAt(p, d);
      } catch (err) {
        failed[p] = 1;
        fail({ p, d, message: `historical VaR: ${err instanceof Error ? err.message : String(err)}` });
      }
    }
  }
}

function figures(
  { pnl, coverage, missing }: ScenarioPnl,
  held: Int32Array,
  ids: readonly string[],
  minCoverage: number,
  stale: boolean,
): Omit<VarRow, 'portfolioId' | 'date' | 'method' | 'windowDays'> {
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
 * The filtered simple returns of one date's scenarios, per security, computed once per
 * date and shared by every portfolio that holds it: r*_s = r_s sigma_today / sigma_s,
 * then exp(r*) - 1. A past date without a sigma (before the security's EWMA entry) is a
 * gap; a security without a sigma today has no filtered scenario at all. Buffers are
 * reused from date to date.
 */
class FilteredScenarios {
  private d = -1;
  private readonly done: Int32Array;
  /** Per security, the last position of its current column without a return (-1: none). */
  private readonly gapAt: Int32Array;
  private readonly out: Float64Array;
  private readonly r: Float64Array;
  private readonly past: Float64Array;
  private readonly today = new Float64Array(1);
  /**
   * sigmaAfter by security, from the first row a scenario reads on (N x sigmaRows): a
   * column's sigmas are then one contiguous read. Row r of security j at j * sigmaRows + r - firstSigmaRow.
   */
  private readonly sigmaBySecurity: Float64Array;
  private readonly firstSigmaRow: number;
  private readonly sigmaRows: number;

  constructor(
    private readonly inputs: HistoricalInputs,
    private readonly longest: number,
    firstScenarioRow: number,
  ) {
    const n = inputs.returns.securityIds.length;
    const t = inputs.returns.dates.length;
    this.firstSigmaRow = Math.max(0, firstScenarioRow - 1);
    this.sigmaRows = Math.max(0, t - this.firstSigmaRow);
    this.sigmaBySecurity = new Float64Array(n * this.sigmaRows);
    for (let row = this.firstSigmaRow; row < t; row++) {
      for (let j = 0; j < n; j++) this.sigmaBySecurity[j * this.sigmaRows + row - this.firstSigmaRow] = inputs.sigmaAfter[row * n + j];
    }
    this.done = new Int32Array(n).fill(-1);
    this.gapAt = new Int32Array(n);
    this.out = new Float64Array(n * longest);
    this.r = new Float64Array(longest);
    this.past = new Float64Array(longest);
  }

  moveTo(d: number): void {
    this.d = d;
  }

  /** Every security's filtered simple returns of the current date: `longest` per security, oldest first. */
  get scenarios(): Float64Array {
    return this.out;
  }

  /** The last position of security j's column (computed by columnStart) without a return; -1: none. */
  lastGap(j: number): number {
    return this.gapAt[j];
  }

  /** Where security j's scenarios of the current date start in `scenarios`, computing them on first use. */
  columnStart(j: number): number {
    const { longest, d } = this;
    const start = j * longest;
    if (this.done[j] !== d) {
      const { returns } = this.inputs;
      const t = returns.dates.length;
      const sigmas = this.sigmaBySecurity;
      const sigmaAt = j * this.sigmaRows - this.firstSigmaRow;
      const today = sigmas[sigmaAt + d];
      for (let s = 0; s < longest; s++) {
        const row = d - longest + 1 + s;
        const sigma = row >= 1 && row - 1 >= this.firstSigmaRow ? sigmas[sigmaAt + row - 1] : Number.NaN;
        const known = Number.isFinite(sigma) && Number.isFinite(today);
        // an unknown sigma is a gap: a NaN return over a unit sigma stays NaN
        this.past[s] = known ? sigma : 1;
        this.r[s] = known ? returns.returnsBySecurity[j * t + row] : Number.NaN;
      }
      this.today[0] = Number.isFinite(today) ? today : 0;
      const column = this.out.subarray(start, start + longest);
      filteredReturns(this.r, longest, this.past, this.today, column);
      let gap = -1;
      for (let s = 0; s < longest; s++) {
        column[s] = Math.expm1(column[s]);
        if (!isScenarioReturn(column[s])) gap = s;
      }
      this.gapAt[j] = gap;
      this.done[j] = d;
    }
    return start;
  }
}
