import type { Logger } from 'pino';
import type { Config } from '../config/load.ts';
import { annualizedReturn, annualizedVolatility } from './math/annualize.ts';
import { mean, sampleVariance } from './math/moments.ts';
import { EwmaEstimate, type EwmaState } from './ewmaEstimate.ts';
import type { PortfolioPanel, ReturnPanel } from './inputs.ts';
import { assessRow, type CovarianceView, type Exposure, type RiskSettings } from './portfolioRow.ts';
import type { Progress } from './progress.ts';
import { chooseSamplePath, SampleEstimate, slidingStartRow } from './sampleEstimate.ts';
import type { ResultStage } from './staging.ts';

/**
 * The risk stage's loop: for each estimate (every rolling window, then the EWMA) walk
 * the dates once, advancing the estimate, and at each output date (row >= fromRow)
 * stage the per-security stats and one row per portfolio present that day.
 */

interface DateEstimate extends CovarianceView {
  readonly estimator: 'sample' | 'ewma';
  readonly windowDays: number;
  readonly startRow: number;
  forEachSecurity(emit: (j: number, annReturn: number, annVol: number) => void, periodsPerYear: number): void;
}

export interface ComputeInputs {
  returns: ReturnPanel;
  portfolios: PortfolioPanel;
  fromRow: number;
  /** Stored EWMA state at fromRow - 1, or null to replay from the first date. */
  ewmaState: EwmaState | null;
}

/** Number of progress units `computeRisk` reports: one per estimate and output date. */
export function progressUnits(config: Config, dateCount: number, fromRow: number): number {
  return (uniqueWindows(config).length + (config.risk.ewma.enabled ? 1 : 0)) * Math.max(0, dateCount - fromRow);
}

/** Stages every result of the run; returns the EWMA state at the last date (null without EWMA or dates). */
export function computeRisk(input: ComputeInputs, config: Config, stage: ResultStage, progress: Progress, log: Logger): EwmaState | null {
  const { returns, portfolios, fromRow } = input;
  const dateCount = returns.dates.length;
  const settings: RiskSettings = { periodsPerYear: config.risk.tradingDaysPerYear, minCoverage: config.risk.minCoverage };
  const load = holdingsLoad(returns, portfolios, fromRow);
  for (const windowDays of uniqueWindows(config)) {
    const path = chooseSamplePath({
      window: windowDays,
      securities: load.securitiesWithReturns,
      holdingsPerDate: load.perDate,
      holdingsSquaredPerDate: load.squaredPerDate,
      outputDates: dateCount - fromRow,
      warmupDates: fromRow - slidingStartRow(fromRow, windowDays),
    });
    log.debug({ windowDays, path }, 'sample covariance path');
    const estimate = new SampleEstimate(returns, windowDays, path, fromRow);
    walk(estimate, (d, output) => estimate.advance(d, output), input, config, settings, stage, progress);
  }
  if (!config.risk.ewma.enabled || dateCount === 0) return null;
  const { lambda, seedDays } = config.risk.ewma;
  const ewma = new EwmaEstimate(returns, lambda, seedDays, input.ewmaState);
  walk(ewma, (d) => ewma.advance(d), input, config, settings, stage, progress);
  return ewma.snapshot();
}

function uniqueWindows(config: Config): number[] {
  return [...new Set(config.risk.windows)].sort((a, b) => a - b);
}

function walk(
  estimate: DateEstimate,
  advance: (d: number, output: boolean) => void,
  input: ComputeInputs,
  config: Config,
  settings: RiskSettings,
  stage: ResultStage,
  progress: Progress,
): void {
  const { returns, portfolios, fromRow } = input;
  const dateCount = returns.dates.length;
  const lastRow = lastPresentRows(portfolios, dateCount);
  const average = estimate.estimator === 'sample' && config.risk.weights === 'window_average';
  const scratch = new Float64Array(returns.securityIds.length);
  for (let d = estimate.startRow; d < dateCount; d++) {
    const output = d >= fromRow;
    advance(d, output);
    if (!output) continue;
    estimate.forEachSecurity((j, r, v) => stage.addSecurity(d, estimate.windowDays, j, r, v), settings.periodsPerYear);
    for (let p = 0; p < portfolios.ids.length; p++) {
      const slot = p * dateCount + d;
      if (portfolios.present[slot] !== 1) continue;
      const exposure = average
        ? averageExposure(portfolios, returns, p, d, estimate.windowDays, scratch)
        : currentExposure(portfolios, returns, slot);
      const flags = { value: portfolios.value[slot], unpriced: portfolios.unpriced[slot] === 1, stale: portfolios.stale[slot] === 1 };
      const withContributions = config.risk.contributions === 'all' || d === lastRow[p];
      const row = assessRow(exposure, flags, estimate, settings, withContributions);
      const realized = estimate.estimator === 'sample' ? realizedFigures(portfolios, p, d, estimate.windowDays, dateCount, settings) : null;
      stage.addDaily({
        portfolio: p,
        row: d,
        windowDays: estimate.windowDays,
        estimator: estimate.estimator,
        figures: [
          flags.value,
          row.volExAnte,
          realized?.vol ?? Number.NaN,
          realized?.annReturn ?? Number.NaN,
          row.var99_1d,
          row.es975_1d,
          row.var99_10d,
          row.es975_10d,
          row.diversification,
          row.coverage,
        ],
        status: row.status,
        nHoldings: row.nHoldings,
        nCovered: row.nCovered,
      });
      if (row.contributions) {
        const { mcr, ccr, pct } = row.contributions;
        for (let a = 0; a < exposure.j.length; a++) {
          stage.addContribution(p, d, estimate.windowDays, estimate.estimator, exposure.j[a], [exposure.w[a], mcr[a], ccr[a], pct[a]]);
        }
      }
    }
    progress.advance();
  }
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

function lastPresentRows(portfolios: PortfolioPanel, dateCount: number): Int32Array {
  const last = new Int32Array(portfolios.ids.length).fill(-1);
  for (let p = 0; p < portfolios.ids.length; p++) {
    for (let d = dateCount - 1; d >= 0 && last[p] === -1; d--) if (portfolios.present[p * dateCount + d] === 1) last[p] = d;
  }
  return last;
}

/** Average work per output date, for the choice of the sample path. */
function holdingsLoad(returns: ReturnPanel, portfolios: PortfolioPanel, fromRow: number) {
  const dateCount = returns.dates.length;
  const n = returns.securityIds.length;
  let securitiesWithReturns = 0;
  for (let j = 0; j < n; j++) {
    for (let d = 0; d < dateCount; d++) {
      if (returns.runLength[d * n + j] > 0) {
        securitiesWithReturns++;
        break;
      }
    }
  }
  let sum = 0;
  let squares = 0;
  for (let p = 0; p < portfolios.ids.length; p++) {
    for (let d = fromRow; d < dateCount; d++) {
      const slot = p * dateCount + d;
      let k = 0;
      for (let h = portfolios.offsets[slot]; h < portfolios.offsets[slot + 1]; h++) k += returns.isCash[portfolios.security[h]] === 1 ? 0 : 1;
      sum += k;
      squares += k * k;
    }
  }
  const dates = Math.max(1, dateCount - fromRow);
  return { securitiesWithReturns, perDate: sum / dates, squaredPerDate: squares / dates };
}
