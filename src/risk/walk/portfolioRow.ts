import { annualizedVolatility } from '../math/annualize.ts';
import { diversificationRatio, eulerContributions, portfolioVolatility, type EulerContributions } from '../math/contributions.ts';
import { parametricES, parametricVaR } from '../math/loss.ts';

/**
 * One portfolio on one date under one covariance estimate: which holdings have a full
 * history (coverage), why a figure is missing (status), and, when enough is covered,
 * the ex-ante volatility, its Euler contributions, the diversification ratio and the
 * normal VaR / ES. The caller supplies the estimate's products, so the same code serves
 * the rolling sample windows and the EWMA.
 */

/** The weight vector a row is computed from (current weights, or a window average). */
export interface Exposure {
  /** Every holding (security index and weight), cash and uncovered ones included. */
  j: Int32Array;
  w: Float64Array;
  /** By security index (not by holding): 1 for a cash balance. */
  isCash: Uint8Array;
}

export interface CovarianceView {
  /** True when security j has the history the estimate needs at this date. */
  covered(j: number): boolean;
  /** Daily variance S_jj of a covered security. */
  variance(j: number): number;
  /** S[idx, idx] w (daily), for covered securities only; written into `out` when given. */
  product(idx: Int32Array, w: Float64Array, out?: Float64Array): Float64Array;
}

export interface RiskSettings {
  periodsPerYear: number;
  minCoverage: number;
}

export interface RowFigures {
  volExAnte: number;
  var99_1d: number;
  es975_1d: number;
  var99_10d: number;
  es975_10d: number;
  diversification: number;
  coverage: number;
  status: string;
  nHoldings: number;
  nCovered: number;
  /** When asked for: per holding of the exposure (same order), NaN for an uncovered one, cash 0. */
  contributions: { mcr: Float64Array; ccr: Float64Array; pct: Float64Array } | null;
}

export interface SlotFlags {
  /** Portfolio value in base currency, NaN when unknown. */
  value: number;
  unpriced: boolean;
  stale: boolean;
}

const NOTHING = Number.NaN;

/**
 * Buffers that `assessRow` reuses from one row to the next (one per walk over the dates),
 * so that a backfill allocates nothing per row beyond the figures it keeps.
 */
export class RowScratch {
  coveredAt = new Int32Array(256);
  idx = new Int32Array(256);
  w = new Float64Array(256);
  vols = new Float64Array(256);
  sw = new Float64Array(256);

  /** Room for n holdings. */
  reserve(n: number): void {
    if (n <= this.coveredAt.length) return;
    const size = Math.max(n, 2 * this.coveredAt.length);
    this.coveredAt = new Int32Array(size);
    this.idx = new Int32Array(size);
    this.w = new Float64Array(size);
    this.vols = new Float64Array(size);
    this.sw = new Float64Array(size);
  }
}

/**
 * coverage = (|cash| + sum |w_i| over covered securities) / sum |w_i| over all holdings:
 * the share of the gross value (absolute values, so a short counts as exposure, not as
 * an offset) that has a full history.
 */
export function assessRow(
  exposure: Exposure,
  flags: SlotFlags,
  cov: CovarianceView,
  settings: RiskSettings,
  withContributions: boolean,
  scratch: RowScratch = new RowScratch(),
): RowFigures {
  const n = exposure.j.length;
  scratch.reserve(n);
  const coveredAt = scratch.coveredAt;
  let covered = 0;
  let gross = 0;
  let coveredGross = 0;
  let nHoldings = 0;
  for (let a = 0; a < n; a++) {
    const abs = Math.abs(exposure.w[a]);
    gross += abs;
    if (exposure.isCash[exposure.j[a]] === 1) {
      coveredGross += abs;
      continue;
    }
    nHoldings++;
    if (cov.covered(exposure.j[a])) {
      coveredGross += abs;
      coveredAt[covered++] = a;
    }
  }
  const priced = !flags.unpriced && Number.isFinite(flags.value) && Number.isFinite(gross);
  // at a value <= 0 weights (value / portfolio value) lose their meaning, and so do the
  // volatility, VaR and ES built on them: report none rather than a number like 51,506%
  const valued = priced && flags.value > 0;
  const coverage = valued && gross > 0 ? coveredGross / gross : NOTHING;
  const reasons: string[] = [];
  if (!priced) reasons.push('unpriced');
  else if (!valued) reasons.push('value_not_positive');
  else if (coverage < settings.minCoverage) reasons.push('insufficient_history');
  else if (coverage < 1) reasons.push('partial_history');
  if (flags.stale) reasons.push('stale_prices');
  const status = reasons.length === 0 ? 'ok' : reasons.join(',');
  const empty: RowFigures = {
    volExAnte: NOTHING,
    var99_1d: NOTHING,
    es975_1d: NOTHING,
    var99_10d: NOTHING,
    es975_10d: NOTHING,
    diversification: NOTHING,
    coverage,
    status,
    nHoldings,
    nCovered: covered,
    contributions: null,
  };
  if (!valued || !(coverage >= settings.minCoverage)) return empty;

  const idx = scratch.idx.subarray(0, covered);
  const w = scratch.w.subarray(0, covered);
  const vols = scratch.vols.subarray(0, covered);
  for (let b = 0; b < covered; b++) {
    const a = coveredAt[b];
    idx[b] = exposure.j[a];
    w[b] = exposure.w[a];
    vols[b] = annualizedVolatility(cov.variance(idx[b]), settings.periodsPerYear);
  }
  // an all-cash portfolio (or one whose covered part is empty) has no risk: vol 0
  const sw = covered > 0 ? cov.product(idx, w, scratch.sw.subarray(0, covered)) : scratch.sw.subarray(0, 0);
  const euler = withContributions ? eulerContributions(sw, w, settings.periodsPerYear) : null;
  const vol = euler ? euler.vol : portfolioVolatility(sw, w, settings.periodsPerYear);
  const loss = { volAnnual: vol, periodsPerYear: settings.periodsPerYear, value: flags.value };

  return {
    ...empty,
    volExAnte: vol,
    var99_1d: parametricVaR({ ...loss, horizonDays: 1, level: 0.99 }),
    es975_1d: parametricES({ ...loss, horizonDays: 1, level: 0.975 }),
    var99_10d: parametricVaR({ ...loss, horizonDays: 10, level: 0.99 }),
    es975_10d: parametricES({ ...loss, horizonDays: 10, level: 0.975 }),
    diversification: diversificationRatio(w, vols, vol),
    contributions: euler ? byHolding(exposure, coveredAt.subarray(0, covered), euler) : null,
  };
}

/** Euler figures laid out per holding of the exposure: cash 0 (no covariance), uncovered NaN. */
function byHolding(exposure: Exposure, coveredAt: Int32Array, euler: EulerContributions) {
  const n = exposure.j.length;
  const mcr = new Float64Array(n).fill(NOTHING);
  const ccr = new Float64Array(n).fill(NOTHING);
  const pct = new Float64Array(n).fill(NOTHING);
  for (let a = 0; a < n; a++) {
    if (exposure.isCash[exposure.j[a]] === 1) {
      mcr[a] = 0;
      ccr[a] = 0;
      pct[a] = euler.vol > 0 ? 0 : NOTHING;
    }
  }
  coveredAt.forEach((a, b) => {
    mcr[a] = euler.mcr[b];
    ccr[a] = euler.ccr[b];
    pct[a] = euler.pct[b];
  });
  return { mcr, ccr, pct };
}
