import { requireInteger, requireLength, requireOpenUnit } from './checks.ts';

/**
 * Historical simulation: today's holdings revalued under each past date's returns.
 *
 * Scenario s applies each holding's base-currency log return r_i,s of that date to the
 * position values V_i at today's close: pnl_s = sum_i V_i (exp(r_i,s) - 1) (full
 * revaluation of a linear holding; J. C. Hull, Risk Management and Financial
 * Institutions, chapter on historical simulation). Losses L_s = -pnl_s sorted
 * descending give VaR_a = L_(k) and ES_a = mean of L_(1) .. L_(k), k = ceil(N (1 - a))
 * (the order-statistic convention fixed in the SPEC, section 9).
 *
 * Caution: the estimate repeats only what its window saw; a crash older than N
 * dates, or one that never happened, is not in it.
 */

export interface ScenarioPnl {
  /** pnl_s per scenario over the holdings with every return, in base currency. */
  pnl: Float64Array;
  /**
   * Gross value with every return over gross value, sum |V_i| covered / sum |V_i|
   * (the coverage rule of the risk rows, cash counted like any holding). 1 when every
   * holding has every scenario; NaN when the gross value is zero.
   */
  coverage: number;
  /** Holdings (indices into `values`) left out because a scenario has no return for them. */
  missing: Int32Array;
}

/**
 * pnl_s = sum_i V_i (exp(r_i,s) - 1) for `scenarios` rows of returns (row-major,
 * r[s * n + i], n = values.length). A NaN (or +Infinity) return marks the holding as
 * missing: it is left out of every scenario and named in `missing`, never counted as
 * unchanged. -Infinity is a price gone to zero, a total loss: exp(-Infinity) - 1 = -1.
 * A holding whose value is zero is never missing (it cannot gain or lose).
 */
export function scenarioPnl(values: Float64Array, returns: Float64Array, scenarios: number): ScenarioPnl {
  requireLength('scenarioPnl', 'returns', returns.length, scenarios * values.length);
  const rowMajor = Int32Array.from(values, (_, i) => i);
  return scenarioPnlAt(values, returns.map(Math.expm1), { at: rowMajor, stride: values.length, first: 0 }, scenarios);
}

/**
 * Where holding i's simple return R_i,s = exp(r_i,s) - 1 of scenario s lies in a flat
 * buffer: at[i] + (first + s) * stride. at[i] = -1: the holding never moves (cash in the
 * base currency), R = 0 in every scenario.
 */
export interface ScenarioLayout {
  at: Int32Array;
  stride: number;
  first: number;
  /**
   * Optional: full[i] = 1 when holding i has a return in every scenario read, 0 when it
   * lacks one, as the caller already knows (a running count of gaps); the scan of each
   * holding's returns is then skipped. It must agree with the returns.
   */
  full?: Uint8Array;
}

/**
 * As `scenarioPnl`, from simple returns already taken, read in place: pnl_s = sum_i V_i R_i,s.
 * A caller that revalues many portfolios under the same scenarios converts each return
 * once and keeps each security's returns contiguous (stride 1), so nothing is gathered.
 * NaN (or +Infinity) marks a missing return. Each pnl_s adds the holdings in index order,
 * whatever the layout, so every layout gives the same figures.
 */
export function scenarioPnlAt(values: Float64Array, source: Float64Array, layout: ScenarioLayout, scenarios: number): ScenarioPnl {
  const fn = 'scenarioPnl';
  const n = values.length;
  const { at, stride, first, full: known } = layout;
  requireInteger(fn, 'scenarios', scenarios, 1);
  requireLength(fn, 'layout.at', at.length, n);
  if (known !== undefined) requireLength(fn, 'layout.full', known.length, n);
  // where each holding that moves the P&L starts reading, in holding order
  const starts = new Int32Array(n);
  const moving = new Float64Array(n);
  let movers = 0;
  let gross = 0;
  let coveredGross = 0;
  const missing: number[] = [];
  for (let i = 0; i < n; i++) {
    if (!Number.isFinite(values[i])) throw new Error(`${fn}: values[${i}] must be finite, got ${values[i]}`);
    const start = at[i] + first * stride;
    let full = true;
    if (at[i] >= 0) {
      if (start < 0 || start + (scenarios - 1) * stride >= source.length) throw new Error(`${fn}: holding ${i}'s scenarios lie outside the returns`);
      if (known !== undefined) full = known[i] === 1;
      else for (let s = 0; s < scenarios && full; s++) full = isScenarioReturn(source[start + s * stride]);
    }
    gross += Math.abs(values[i]);
    if (!full && values[i] !== 0) {
      missing.push(i);
      continue;
    }
    coveredGross += Math.abs(values[i]);
    // a holding that never moves adds V x 0, which leaves a sum begun at +0 unchanged
    if (values[i] === 0 || at[i] < 0) continue;
    starts[movers] = start;
    moving[movers++] = values[i];
  }
  const pnl = new Float64Array(scenarios);
  addScenarioValues(pnl, source, stride, starts.subarray(0, movers), moving.subarray(0, movers));
  return { pnl, coverage: gross > 0 ? coveredGross / gross : Number.NaN, missing: Int32Array.from(missing) };
}

/**
 * pnl_s += sum_m v_m source[starts_m + s stride], the holdings added one after the other
 * in their order (so every layout gives the same digits), four at a time per scenario
 * so each pnl_s is loaded and stored once per four holdings instead of once per holding.
 */
function addScenarioValues(pnl: Float64Array, source: Float64Array, stride: number, starts: Int32Array, v: Float64Array): void {
  const scenarios = pnl.length;
  let m = 0;
  for (; m + 4 <= v.length; m += 4) {
    const a = starts[m];
    const b = starts[m + 1];
    const c = starts[m + 2];
    const e = starts[m + 3];
    const va = v[m];
    const vb = v[m + 1];
    const vc = v[m + 2];
    const ve = v[m + 3];
    for (let s = 0, k = 0; s < scenarios; s++, k += stride) pnl[s] = pnl[s] + va * source[a + k] + vb * source[b + k] + vc * source[c + k] + ve * source[e + k];
  }
  for (; m < v.length; m++) {
    const a = starts[m];
    const va = v[m];
    for (let s = 0, k = 0; s < scenarios; s++, k += stride) pnl[s] += va * source[a + k];
  }
}

/**
 * k = ceil(N (1 - a)), the number of tail scenarios. N (1 - a) is rounded to 9 decimals
 * first: in binary 500 x (1 - 0.99) is 5.000000000000004, and a bare ceil would give 6.
 */
export function tailCount(scenarios: number, level: number): number {
  requireInteger('tailCount', 'scenarios', scenarios, 1);
  requireOpenUnit('tailCount', 'level', level);
  const expected = Math.round(scenarios * (1 - level) * 1e9) / 1e9;
  return Math.max(1, Math.ceil(expected));
}

export interface HistoricalLoss {
  /** VaR_a = L_(k), the k-th largest loss (negative when even that scenario gains). */
  var: number;
  /** ES at its own level: the mean of the k' largest losses. */
  es: number;
  /** k of the VaR and k' of the ES. */
  varCount: number;
  esCount: number;
}

/**
 * VaR at `varLevel` and ES at `esLevel` (SPEC: 0.99 and 0.975) from scenario P&L, with
 * the order-statistic convention above. Throws for a NaN P&L: a scenario without a
 * figure must be resolved (coverage) before it reaches the tail.
 */
export function historicalLoss(pnl: Float64Array, varLevel: number, esLevel: number): HistoricalLoss {
  const fn = 'historicalLoss';
  requireInteger(fn, 'pnl.length', pnl.length, 1);
  const varCount = tailCount(pnl.length, varLevel);
  const esCount = tailCount(pnl.length, esLevel);
  // only the tail is ordered: the largest losses, kept sorted as the scenarios are read
  const losses = new Float64Array(Math.max(varCount, esCount));
  let kept = 0;
  for (let s = 0; s < pnl.length; s++) {
    if (!Number.isFinite(pnl[s])) throw new Error(`${fn}: pnl[${s}] must be finite, got ${pnl[s]}`);
    const loss = -pnl[s];
    if (kept === losses.length && !ranksAbove(loss, losses[kept - 1])) continue;
    let k = kept < losses.length ? kept++ : kept - 1;
    for (; k > 0 && ranksAbove(loss, losses[k - 1]); k--) losses[k] = losses[k - 1];
    losses[k] = loss;
  }
  let tail = 0;
  for (let k = 0; k < esCount; k++) tail += losses[k];
  return { var: losses[varCount - 1], es: tail / esCount, varCount, esCount };
}

/** x comes before y in descending order, +0 before -0 (the order of a sorted then reversed Float64Array). */
function ranksAbove(x: number, y: number): boolean {
  return x > y || (x === 0 && y === 0 && Object.is(y, -0) && !Object.is(x, -0));
}

/**
 * Filtered (volatility-weighted) historical simulation, Hull and White, "Incorporating
 * volatility updating into the historical simulation method for value-at-risk",
 * Journal of Risk 1(1), 1998: r*_i,s = r_i,s sigma_i,today / sigma_i,s, where sigma_i,s is
 * the EWMA daily sigma that was the forecast for date s and sigma_i,today the forecast
 * for tomorrow. Returns a new scenarios x n matrix.
 *
 * A missing return (NaN) stays missing. A past sigma of zero (a series that had never
 * moved) scales a zero return to zero and leaves any other return missing (NaN), since
 * the ratio is undefined; the coverage of `scenarioPnl` then reports it. `out`, when
 * given, receives the result (a caller walking many dates reuses one buffer).
 */
export function filteredReturns(
  returns: Float64Array,
  scenarios: number,
  sigmaPast: Float64Array,
  sigmaToday: Float64Array,
  out: Float64Array = new Float64Array(returns.length),
): Float64Array {
  const fn = 'filteredReturns';
  const n = sigmaToday.length;
  requireInteger(fn, 'scenarios', scenarios, 1);
  requireLength(fn, 'returns', returns.length, scenarios * n);
  requireLength(fn, 'sigmaPast', sigmaPast.length, scenarios * n);
  requireLength(fn, 'out', out.length, scenarios * n);
  for (let i = 0; i < n; i++) requireSigma(fn, `sigmaToday[${i}]`, sigmaToday[i]);
  for (let s = 0; s < scenarios; s++) {
    for (let i = 0; i < n; i++) {
      const at = s * n + i;
      requireSigma(fn, `sigmaPast[${at}]`, sigmaPast[at]);
      const r = returns[at];
      // the ratio first, so an unchanged sigma leaves the return exactly as it was
      if (sigmaPast[at] > 0) out[at] = r * (sigmaToday[i] / sigmaPast[at]);
      else out[at] = r === 0 ? 0 : Number.NaN;
    }
  }
  return out;
}

/** A scenario's return as scenarioPnl reads it: NaN and +Infinity mark a missing one. */
export function isScenarioReturn(r: number): boolean {
  return !Number.isNaN(r) && r !== Infinity;
}

function requireSigma(fn: string, name: string, sigma: number): void {
  if (!(sigma >= 0) || !Number.isFinite(sigma)) throw new Error(`${fn}: ${name} must be a non-negative finite sigma, got ${sigma}`);
}
