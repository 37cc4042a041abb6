import type { Random } from '../../src/demo/random.ts';
import { seriesLayouts, type ReturnPanel } from '../../src/risk/inputs/panels.ts';
import { continueSecurityVariances } from '../../src/loss/securitySigmas.ts';

export interface PanelShape {
  /** Daily drift added to every return. */
  drift: number;
  /** Security j's loading on the common market move (daily sd 1%). */
  loading: (j: number) => number;
  /** Where a return is missing (NaN): holes, late listings, row 0. */
  missing: (d: number, j: number) => boolean;
  securityId: (j: number) => string;
}

/**
 * T x N invented daily log returns with a common market move, so the columns are
 * correlated as daily returns are (1.2% idiosyncratic sd), laid out as the risk stage
 * reads them (dates d0, d1, ...; no cash: the caller marks it).
 */
export function randomReturnPanel(random: Random, t: number, n: number, shape: PanelShape): ReturnPanel {
  const returns = new Float64Array(t * n);
  for (let d = 0; d < t; d++) {
    const market = 0.01 * random.normal();
    for (let j = 0; j < n; j++) {
      returns[d * n + j] = shape.missing(d, j) ? Number.NaN : shape.drift + market * shape.loading(j) + 0.012 * random.normal();
    }
  }
  return {
    dates: Array.from({ length: t }, (_, d) => `d${d}`),
    securityIds: Array.from({ length: n }, (_, j) => shape.securityId(j)),
    isCash: new Uint8Array(n),
    returns,
    ...seriesLayouts(returns, t, n),
  };
}

/**
 * Invented holdings of `portfolios` portfolios over t dates, as a PortfolioPanel's lists
 * (offsets by slot p * t + d, securities sorted, weights adding up to 1): security 0
 * (the caller's cash) always, and `size(p)` others drawn at random (repeats merged)
 * every `every` dates.
 */
export function randomHoldings(random: Random, portfolios: number, t: number, n: number, every: number, size: (p: number) => number) {
  const offsets = new Int32Array(portfolios * t + 1);
  const security: number[] = [];
  const weight: number[] = [];
  for (let p = 0; p < portfolios; p++) {
    let held: number[] = [];
    for (let d = 0; d < t; d++) {
      if (d % every === 0) held = [0, ...new Set(Array.from({ length: size(p) }, () => 1 + Math.floor(random.uniform() * (n - 1))))].sort((a, b) => a - b);
      const raw = held.map(() => 0.2 + random.uniform());
      const total = raw.reduce((a, b) => a + b, 0);
      for (let a = 0; a < held.length; a++) {
        security.push(held[a]);
        weight.push(raw[a] / total);
      }
      offsets[p * t + d + 1] = security.length;
    }
  }
  return { offsets, security: Int32Array.from(security), weight: Float64Array.from(weight) };
}

/** Each security's EWMA sigma after each row (T x N, NaN while out), replayed from row 0, as the loss stage computes it for a full run. */
export function securitySigmas(panel: ReturnPanel, lambda: number, seedDays: number): Float64Array {
  const variance = new Float64Array(panel.dates.length * panel.securityIds.length).fill(Number.NaN);
  continueSecurityVariances(panel, lambda, seedDays, variance, 0);
  return variance.map(Math.sqrt);
}
