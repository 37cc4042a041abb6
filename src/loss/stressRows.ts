import type { StressScenario } from '../config/stressSchema.ts';
import { WORST_WINDOW_PREFIX } from '../config/stressSchema.ts';
import type { ReturnPanel } from '../risk/inputs/panels.ts';
import { compoundedReturns, hypotheticalReturns, stressPnl, type StressHolding } from '../risk/math/stress.ts';
import type { StressRow } from './lossStage.ts';
import type { WorstWindows } from './worstWindows.ts';

/**
 * stress_results rows of one portfolio at one date (SPEC section 9, formulas in
 * src/risk/math/stress.ts): every configured scenario, then the worst 1-, 5- and 20-day
 * windows of the portfolio's own return history up to that date. A stress result says
 * what one move would do to the holdings; it is not a probability.
 */

export interface StressBook extends StressHolding {
  /** Value at the date's close in base currency. */
  valueBase: number;
}

export interface StressInputs {
  portfolioId: string;
  /** Date row of the holdings. */
  d: number;
  holdings: readonly StressBook[];
  returns: ReturnPanel;
  /** The worst windows of the portfolio's own history up to row d (worstWindowsUpTo). */
  worst: WorstWindows;
  /** The returns of ranges lying before the rows the run read (readRangeBlocks), by rangeKey. */
  earlier: ReadonlyMap<string, Float64Array>;
}

/** The key of the rows first .. last of a range. */
export function rangeKey(first: number, last: number): string {
  return `${first}:${last}`;
}

export function stressRows(inputs: StressInputs, scenarios: readonly StressScenario[], baseCurrency: string, emit: (row: StressRow) => void): void {
  const { portfolioId, d, holdings, returns } = inputs;
  const date = returns.dates[d];
  const values = Float64Array.from(holdings, (h) => h.valueBase);
  const total = values.reduce((a, b) => a + b, 0);
  const base = { portfolioId, date };
  for (const scenario of scenarios) {
    if (scenario.kind === 'hypothetical') {
      const result = stressPnl(values, hypotheticalReturns(holdings, scenario.shocks, baseCurrency));
      emit({ ...base, scenarioId: scenario.id, kind: 'hypothetical', ...figures(result, holdings), rangeFrom: null, rangeTo: null });
      continue;
    }
    const range = storedRange(returns.dates, scenario.from, scenario.to);
    const scenarioBase = { ...base, scenarioId: scenario.id, kind: 'historical' as const };
    if (range === null) {
      // not all in stored history (storedRange): no figure at all, every holding that could move is named
      const simple = withoutData(inputs);
      const missing = holdings.filter((_, a) => Number.isNaN(simple[a])).map((h) => h.security);
      emit({ ...scenarioBase, pnlBase: Number.NaN, pnlPct: Number.NaN, coverage: 0, missing, rangeFrom: scenario.from, rangeTo: scenario.to });
      continue;
    }
    const [first, last] = range;
    emit({
      ...scenarioBase,
      ...figures(stressPnl(values, rangeReturns(inputs, first, last)), holdings),
      rangeFrom: returns.dates[first - 1],
      rangeTo: returns.dates[last],
    });
  }
  for (const [days, worst] of inputs.worst) {
    emit({
      ...base,
      scenarioId: `${WORST_WINDOW_PREFIX}${days}d`,
      kind: 'historical',
      pnlBase: worst === null ? Number.NaN : total * worst.return,
      pnlPct: worst === null || !(total > 0) ? Number.NaN : worst.return,
      coverage: worst === null ? 0 : 1,
      missing: [],
      rangeFrom: worst === null ? null : returns.dates[worst.start - 1],
      rangeTo: worst === null ? null : returns.dates[worst.start + days - 1],
    });
  }
}

/** The rows first .. last whose returns each configured historical range in stored history reads. */
export function historicalRanges(dates: readonly string[], scenarios: readonly StressScenario[]): [number, number][] {
  return scenarios.flatMap((s) => {
    const range = s.kind === 'historical' ? storedRange(dates, s.from, s.to) : null;
    return range === null ? [] : [range];
  });
}

/**
 * The rows first .. last of a range all in stored history (from its first date's close to
 * its last date's close, with at least one stored date in it); null otherwise: its unseen
 * days would count as unchanged, so it gets no figure.
 */
function storedRange(dates: readonly string[], from: string, to: string): [number, number] | null {
  if (dates.length === 0 || from < dates[0] || to > dates[dates.length - 1]) return null;
  const [first, last] = rangeRows(dates, from, to);
  return first > last ? null : [first, last];
}

/** The rows whose returns make up the move from the close of `from` to the close of `to`: dates in (from, to]. */
function rangeRows(dates: readonly string[], from: string, to: string): [number, number] {
  let first = dates.findIndex((date) => date > from);
  if (first === -1) first = dates.length;
  let last = first - 1;
  while (last + 1 < dates.length && dates[last + 1] <= to) last++;
  // row 0 has no return
  return [Math.max(first, 1), last];
}

/** Each holding's return over a range without stored data: base cash 0, anything that could move NaN. */
function withoutData({ returns, holdings }: StressInputs): Float64Array {
  const position = new Map(returns.securityIds.map((id, j) => [id, j]));
  return Float64Array.from(holdings, (h) => {
    const j = position.get(h.security);
    return j !== undefined && returns.isCash[j] === 1 ? 0 : Number.NaN;
  });
}

/**
 * Each holding's compounded return over rows first .. last (first <= last); base cash 0, a
 * gap NaN. The rows come from the panel, or from the block read for a range before it.
 */
function rangeReturns(inputs: StressInputs, first: number, last: number): Float64Array {
  const { returns, holdings } = inputs;
  const n = returns.securityIds.length;
  const position = new Map(returns.securityIds.map((id, j) => [id, j]));
  const block = inputs.earlier.get(rangeKey(first, last)) ?? returns.returns.subarray(first * n, (last + 1) * n);
  const rows = last - first + 1;
  const logReturns = new Float64Array(rows * holdings.length);
  holdings.forEach((h, a) => {
    const j = position.get(h.security);
    for (let r = 0; r < rows; r++) {
      logReturns[r * holdings.length + a] = j === undefined ? Number.NaN : returns.isCash[j] === 1 ? 0 : block[r * n + j];
    }
  });
  return compoundedReturns(logReturns, rows, holdings.length);
}

function figures(result: ReturnType<typeof stressPnl>, holdings: readonly StressBook[]): Pick<StressRow, 'pnlBase' | 'pnlPct' | 'coverage' | 'missing'> {
  // nothing revalued: no figure, not a zero
  const none = !(result.coverage > 0);
  return {
    pnlBase: none ? Number.NaN : result.pnl[0],
    pnlPct: none ? Number.NaN : result.pnlPct,
    coverage: result.coverage,
    missing: Array.from(result.missing, (a) => holdings[a].security),
  };
}
