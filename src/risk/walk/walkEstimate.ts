import type { Config } from '../../config/load.ts';
import { portfolioFault } from '../../faults.ts';
import type { DateEstimate, EstimatorPlugin } from '../estimators/estimator.ts';
import { estimatorNamed } from '../estimators/registry.ts';
import type { BenchmarkPanel } from '../inputs/benchmarkPanel.ts';
import type { PortfolioPanel, ReturnPanel } from '../inputs/panels.ts';
import { realizedTrackingError } from '../math/activeRisk.ts';
import { annualizedReturn, annualizedVolatility } from '../math/annualize.ts';
import { mean, sampleVariance } from '../math/moments.ts';
import { assessActive, type ActiveFigures } from './activeRow.ts';
import { DAILY_FIGURES, positions, VOL_CHANGE_FIGURES } from './figures.ts';
import { assessRow, RowScratch, type Exposure, type RiskSettings, type RowFigures } from './portfolioRow.ts';
import { ResultCollector, type ResultBatch } from './resultColumns.ts';
import { VolChangeTracker, type KnownProduct, type VolChangeRow } from './volChangeTracker.ts';

/**
 * One estimate's walk over the dates: advance the estimate date by date and, at each
 * output date (row >= fromRow), collect the per-security stats and one row per
 * portfolio present that day. Nothing here touches the database or the clock, so the
 * same walk runs on the main thread or in a worker and gives the same numbers.
 * A portfolio whose row throws or comes out infinite is reported as a failure and left
 * out from then on; the other portfolios go on.
 */

export interface ComputeInputs {
  returns: ReturnPanel;
  portfolios: PortfolioPanel;
  /** The portfolios' benchmarks (none mapped: every ofPortfolio is -1). */
  benchmarks: BenchmarkPanel;
  fromRow: number;
  /** Stored state at fromRow - 1 by estimator name (absent: replay from the first date). */
  states: Readonly<Record<string, unknown>>;
}

/** One estimate of a run: its estimator, window (0: not windowed) and the parameters its plan chose. */
export interface EstimateTask {
  estimator: string;
  windowDays: number;
  params: unknown;
}

export interface WalkSettings extends RiskSettings {
  weights: Config['risk']['weights'];
  contributions: Config['risk']['contributions'];
}

const DAILY = positions(DAILY_FIGURES);
const CHANGE = positions(VOL_CHANGE_FIGURES);

/** Rows (all tables) collected before a batch is handed over; bounds memory in a long backfill. */
const BATCH_ROWS = 1 << 16;

/**
 * Walks one estimate, handing its rows to `emit` in batches. Returns the states the
 * estimate keeps for the next run (none for a stateless one).
 */
export function walkEstimate(task: EstimateTask, input: ComputeInputs, settings: WalkSettings, emit: (batch: ResultBatch) => void): unknown[] {
  const plugin = estimatorNamed(task.estimator);
  const estimate = plugin.open(task.params, task.windowDays, input, input.states[plugin.name] ?? null);
  walk(estimate, plugin, input, settings, emit);
  return estimate.finish?.() ?? [];
}

function walk(
  estimate: DateEstimate,
  plugin: EstimatorPlugin,
  input: ComputeInputs,
  settings: WalkSettings,
  emit: (batch: ResultBatch) => void,
): void {
  const { returns, portfolios, benchmarks, fromRow } = input;
  const dateCount = returns.dates.length;
  const lastRow = lastPresentRows(portfolios, dateCount);
  const average = estimate.windowDays > 0 && settings.weights === 'window_average';
  const accumulator = new Float64Array(returns.securityIds.length);
  const exposureAt = (p: number, d: number): Exposure =>
    average ? averageExposure(portfolios, returns, p, d, estimate.windowDays, accumulator) : currentExposure(portfolios, returns, p * dateCount + d);
  const flagsAt = (slot: number) => ({ value: portfolios.value[slot], unpriced: portfolios.unpriced[slot] === 1, stale: portfolios.stale[slot] === 1 });
  const changes = new VolChangeTracker(portfolios.ids.length, settings.periodsPerYear);
  /** Keeps date d's products for the split on d + 1 (or forgets p when d's row has no volatility). */
  const carry = (p: number, d: number, exposure: Exposure, row: RowFigures) => {
    const next = d + 1 < dateCount && portfolios.present[p * dateCount + d + 1] === 1;
    if (Number.isFinite(row.volExAnte) && next) changes.carry(p, d, estimate, exposure, exposureAt(p, d + 1), knownProduct(row));
    else changes.forget(p);
  };
  /** The row's own S w over its covered holdings (in the scratch, valid until the next row). */
  const knownProduct = (row: RowFigures): KnownProduct | null =>
    Number.isFinite(row.volExAnte) ? { idx: scratch.idx.subarray(0, row.nCovered), sw: scratch.sw.subarray(0, row.nCovered) } : null;
  const scratch = new RowScratch();
  const figures = new Float64Array(DAILY_FIGURES.length);
  const changeFigures = new Float64Array(VOL_CHANGE_FIGURES.length);
  const out = new ResultCollector(estimate.windowDays, plugin.name);
  // a portfolio that failed once is left out for the rest of the walk: its rows are not written
  const failed = new Uint8Array(portfolios.ids.length);
  const fail = (p: number, d: number, err: unknown) => {
    failed[p] = 1;
    changes.forget(p);
    const label = estimate.windowDays > 0 ? `${estimate.windowDays}-day ${plugin.name}` : plugin.name;
    out.addFailure(p, d, `${label} estimate: ${err instanceof Error ? err.message : String(err)}`);
  };
  const addSecurity = (j: number, r: number, v: number) => out.addSecurity(currentRow, j, r, v);
  /** The date before the first output date, for the first split: its products only. */
  const prime = (d: number) => {
    for (let p = 0; p < portfolios.ids.length; p++) {
      const slot = p * dateCount + d;
      if (portfolios.present[slot] !== 1 || failed[p] === 1) continue;
      try {
        const exposure = exposureAt(p, d);
        carry(p, d, exposure, assessRow(exposure, flagsAt(slot), estimate, settings, false, scratch));
      } catch (err) {
        fail(p, d, err);
      }
    }
  };
  let currentRow = -1;
  // an estimate restored at fromRow - 1 (the stored EWMA) holds that date before the first advance
  if (estimate.startRow === fromRow && fromRow > 0) prime(fromRow - 1);
  for (let d = estimate.startRow; d < dateCount; d++) {
    const output = d >= fromRow;
    estimate.advance(d, output || d === fromRow - 1);
    if (d === fromRow - 1) prime(d);
    if (!output) continue;
    currentRow = d;
    estimate.forEachSecurity(addSecurity, settings.periodsPerYear);
    for (let p = 0; p < portfolios.ids.length; p++) {
      const slot = p * dateCount + d;
      if (portfolios.present[slot] !== 1 || failed[p] === 1) continue;
      try {
        portfolioFault(portfolios.ids[p]);
        const exposure = exposureAt(p, d);
        const flags = flagsAt(slot);
        const withContributions = settings.contributions === 'all' || d === lastRow[p];
        estimate.takeIntensity?.();
        const row = assessRow(exposure, flags, estimate, settings, withContributions, scratch);
        const intensity = estimate.takeIntensity?.() ?? Number.NaN;
        const realized = plugin.realized.volatility ? realizedFigures(portfolios, p, d, estimate.windowDays, dateCount, settings) : null;
        figures[DAILY.portfolio_value] = flags.value;
        figures[DAILY.vol_ex_ante] = row.volExAnte;
        figures[DAILY.vol_realized] = realized?.vol ?? Number.NaN;
        figures[DAILY.ann_return] = realized?.annReturn ?? Number.NaN;
        figures[DAILY.var_99_1d] = row.var99_1d;
        figures[DAILY.es_975_1d] = row.es975_1d;
        figures[DAILY.var_99_10d] = row.var99_10d;
        figures[DAILY.es_975_10d] = row.es975_10d;
        figures[DAILY.diversification_ratio] = row.diversification;
        figures[DAILY.coverage] = row.coverage;
        const k = benchmarks.ofPortfolio[p];
        const weights = k >= 0 ? benchmarkAt(benchmarks, k, d, dateCount) : null;
        // nothing to measure against before the benchmark's first snapshot, nor with unknown weights (coverage null)
        const active =
          weights !== null && weights.j.length > 0 && !Number.isNaN(row.coverage)
            ? assessActive(exposure, weights, estimate, settings.periodsPerYear, withContributions)
            : null;
        figures[DAILY.tracking_error_ex_ante] = active?.trackingError ?? Number.NaN;
        figures[DAILY.tracking_error_realized] =
          k >= 0 && plugin.realized.trackingError ? realizedActive(portfolios, benchmarks, p, k, d, estimate.windowDays, dateCount, settings) : Number.NaN;
        figures[DAILY.beta_to_benchmark] = active?.beta ?? Number.NaN;
        figures[DAILY.shrinkage_intensity] = Number.isFinite(row.volExAnte) ? intensity : Number.NaN;
        const infinite = infiniteFigure(figures, row.contributions);
        if (infinite) throw new Error(`${infinite} is not finite`);
        out.addDaily(p, d, figures, row.status, row.nHoldings, row.nCovered);
        if (row.contributions) {
          const { mcr, ccr, pct } = row.contributions;
          for (let a = 0; a < exposure.j.length; a++) out.addContribution(p, d, exposure.j[a], exposure.w[a], mcr[a], ccr[a], pct[a]);
        }
        if (active?.contributions) addActive(out, p, d, active.contributions);
        const change = Number.isFinite(row.volExAnte) ? changes.split(p, d, estimate, knownProduct(row)) : null;
        if (change) addChange(out, p, d, change, withContributions, changeFigures);
        carry(p, d, exposure, row);
      } catch (err) {
        fail(p, d, err);
      }
    }
    out.endDate();
    if (out.pendingRows >= BATCH_ROWS || d === dateCount - 1) emit(out.take());
  }
}

/** A vol_change row, its driver (the largest weights part by size) and, when asked for, its rows per security. */
function addChange(out: ResultCollector, p: number, d: number, change: VolChangeRow, perSecurity: boolean, figures: Float64Array): void {
  let driver = -1;
  for (let a = 0; a < change.securities.length; a++) {
    if (driver === -1 || Math.abs(change.fromWeightsBySecurity[a]) > Math.abs(change.fromWeightsBySecurity[driver])) driver = a;
  }
  figures[CHANGE.vol_prev] = change.volPrev;
  figures[CHANGE.vol_now] = change.volNow;
  figures[CHANGE.from_weights] = change.fromWeights;
  figures[CHANGE.from_market] = change.fromMarket;
  figures[CHANGE.weights_driver_change] = driver === -1 ? Number.NaN : change.fromWeightsBySecurity[driver];
  out.addVolChange(p, d, figures, change.status, driver === -1 ? -1 : change.securities[driver]);
  if (!perSecurity) return;
  for (let a = 0; a < change.securities.length; a++) {
    out.addVolChangeSecurity(p, d, change.securities[a], change.weightPrev[a], change.weightNow[a], change.fromWeightsBySecurity[a]);
  }
}

/**
 * The first figure that is +-Infinity (NaN stands for a missing figure and is fine):
 * an overflow in a value or an estimate, which must never reach risk_daily as a number.
 */
function infiniteFigure(figures: Float64Array, contributions: { mcr: Float64Array; ccr: Float64Array; pct: Float64Array } | null): string | null {
  for (let c = 0; c < figures.length; c++) if (isInfinite(figures[c])) return `${DAILY_FIGURES[c]} (${figures[c]})`;
  if (!contributions) return null;
  const { mcr, ccr, pct } = contributions;
  for (let a = 0; a < mcr.length; a++) {
    if (isInfinite(mcr[a]) || isInfinite(ccr[a]) || isInfinite(pct[a])) return `a contribution (mcr ${mcr[a]}, ccr ${ccr[a]}, pct ${pct[a]})`;
  }
  return null;
}

function isInfinite(v: number): boolean {
  return v === Number.POSITIVE_INFINITY || v === Number.NEGATIVE_INFINITY;
}

function currentExposure(portfolios: PortfolioPanel, returns: ReturnPanel, slot: number): Exposure {
  const start = portfolios.offsets[slot];
  const end = portfolios.offsets[slot + 1];
  return { j: portfolios.security.subarray(start, end), w: portfolios.weight.subarray(start, end), isCash: returns.isCash };
}

/**
 * Mean of the daily weights over the window's W dates, counting the dates on which the
 * portfolio had a priced value (a security not held on a date weighs 0 there). Summed
 * in date order, so every run gets the same digits.
 */
function averageExposure(portfolios: PortfolioPanel, returns: ReturnPanel, p: number, d: number, windowDays: number, acc: Float64Array): Exposure {
  const dateCount = returns.dates.length;
  const touched = new Set<number>();
  let days = 0;
  for (let u = Math.max(portfolios.firstRow, d - windowDays + 1); u <= d; u++) {
    const slot = p * dateCount + u;
    if (portfolios.present[slot] !== 1 || portfolios.unpriced[slot] === 1) continue;
    const start = portfolios.offsets[slot];
    const end = portfolios.offsets[slot + 1];
    let priced = true;
    for (let h = start; h < end; h++) priced &&= Number.isFinite(portfolios.weight[h]);
    if (!priced) continue;
    days++;
    for (let h = start; h < end; h++) {
      const j = portfolios.security[h];
      if (!touched.has(j)) {
        touched.add(j);
        acc[j] = 0;
      }
      acc[j] += portfolios.weight[h];
    }
  }
  const j = Int32Array.from(touched).sort();
  const w = new Float64Array(j.length);
  j.forEach((k, a) => (w[a] = acc[k] / days));
  return { j, w, isCash: returns.isCash };
}

/** vol_realized and ann_return from the W portfolio log returns ending at d; null unless all W exist. */
function realizedFigures(portfolios: PortfolioPanel, p: number, d: number, windowDays: number, dateCount: number, settings: RiskSettings) {
  const first = d - windowDays + 1;
  if (first < 0) return null;
  const series = portfolios.logReturn.subarray(p * dateCount + first, p * dateCount + d + 1);
  for (let u = 0; u < series.length; u++) if (!Number.isFinite(series[u])) return null;
  return {
    vol: annualizedVolatility(sampleVariance(series), settings.periodsPerYear),
    annReturn: annualizedReturn(mean(series), settings.periodsPerYear),
  };
}

/** The benchmark's weights in force at date row d (an empty list before its first snapshot). */
function benchmarkAt(benchmarks: BenchmarkPanel, k: number, d: number, dateCount: number) {
  const slot = k * dateCount + d;
  const start = benchmarks.offsets[slot];
  const end = benchmarks.offsets[slot + 1];
  return { j: benchmarks.security.subarray(start, end), w: benchmarks.weight.subarray(start, end) };
}

function addActive(out: ResultCollector, p: number, d: number, c: NonNullable<ActiveFigures['contributions']>): void {
  for (let m = 0; m < c.j.length; m++) out.addActiveContribution(p, d, c.j[m], [c.w[m], c.b[m], c.mcr[m], c.ccr[m], c.pct[m]]);
}

/** tracking_error_realized from the W active log returns r_p - r_b ending at d; NaN unless all W of both exist. */
function realizedActive(
  portfolios: PortfolioPanel,
  benchmarks: BenchmarkPanel,
  p: number,
  k: number,
  d: number,
  windowDays: number,
  dateCount: number,
  settings: RiskSettings,
): number {
  const first = d - windowDays + 1;
  if (first < 0) return Number.NaN;
  const portfolio = portfolios.logReturn.subarray(p * dateCount + first, p * dateCount + d + 1);
  const benchmark = benchmarks.logReturn.subarray(k * dateCount + first, k * dateCount + d + 1);
  for (let u = 0; u < windowDays; u++) if (!Number.isFinite(portfolio[u]) || !Number.isFinite(benchmark[u])) return Number.NaN;
  return realizedTrackingError(portfolio, benchmark, settings.periodsPerYear);
}

function lastPresentRows(portfolios: PortfolioPanel, dateCount: number): Int32Array {
  const last = new Int32Array(portfolios.ids.length).fill(-1);
  for (let p = 0; p < portfolios.ids.length; p++) {
    for (let d = dateCount - 1; d >= 0 && last[p] === -1; d--) if (portfolios.present[p * dateCount + d] === 1) last[p] = d;
  }
  return last;
}
