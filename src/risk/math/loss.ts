import { requireNonNegative, requireOpenUnit, requirePositive } from './checks.ts';
import { normalPdf, normalQuantile } from './normal.ts';

/** Inputs of the normal (variance-covariance) loss estimates. */
export interface ParametricLossInput {
  /** Annualized volatility of the portfolio's log return, a fraction (0.15 = 15%). */
  volAnnual: number;
  /** A, the periods per year the volatility was annualized with (e.g. 252 trading days). */
  periodsPerYear: number;
  /** h, the holding period in the same periods (1, 10). */
  horizonDays: number;
  /** Confidence level alpha, e.g. 0.99. */
  level: number;
  /** Portfolio value V in base currency. */
  value: number;
}

/**
 * Normal Value-at-Risk with zero mean: VaR = z_alpha sigma_d sqrt(h) |V|, with
 * sigma_d = volAnnual / sqrt(A) and square-root-of-time scaling (RiskMetrics Technical
 * Document, 1996; J. C. Hull, Risk Management and Financial Institutions, chapter on
 * the model-building approach). |V|: with a symmetric distribution a net short
 * portfolio has the same loss quantile; the result is a positive loss amount.
 */
export function parametricVaR(input: ParametricLossInput): number {
  const scale = lossScale('parametricVaR', input);
  return quantileOf(input.level) * scale;
}

/**
 * Normal expected shortfall (mean loss beyond the alpha quantile), zero mean:
 * ES = phi(z_alpha) / (1 - alpha) sigma_d sqrt(h) |V| (McNeil, Frey and Embrechts,
 * Quantitative Risk Management, 2005, chapter 2; from memory).
 */
export function parametricES(input: ParametricLossInput): number {
  const scale = lossScale('parametricES', input);
  const z = quantileOf(input.level);
  return (normalPdf(z) / (1 - input.level)) * scale;
}

// the stage asks for the same two levels on every row: solve each quantile once
const quantiles = new Map<number, number>();

function quantileOf(level: number): number {
  let z = quantiles.get(level);
  if (z === undefined) {
    z = normalQuantile(level);
    quantiles.set(level, z);
  }
  return z;
}

/** sigma_d sqrt(h) |V| after the checks both estimates share. */
function lossScale(fn: string, input: ParametricLossInput): number {
  requireNonNegative(fn, 'volAnnual', input.volAnnual);
  requirePositive(fn, 'periodsPerYear', input.periodsPerYear);
  requirePositive(fn, 'horizonDays', input.horizonDays);
  requireOpenUnit(fn, 'level', input.level);
  if (!Number.isFinite(input.value)) throw new Error(`${fn}: value must be finite, got ${input.value}`);
  const dailyVol = input.volAnnual / Math.sqrt(input.periodsPerYear);
  return dailyVol * Math.sqrt(input.horizonDays) * Math.abs(input.value);
}
