import type { Random } from '../src/demo/random.ts';

/**
 * An invented market with a factor structure, so covariance matrices look like real
 * ones (a dominant market factor, sector blocks, low-volatility bonds) rather than a
 * diagonal of noise. Daily log return of security i on day t, in its own currency:
 *
 *   equity: r = mu + beta_i * m_t + s_(sector i),t + e_i,t
 *   bond:   r = mu + 0.1 * m_t + d_i * b_t + e_i,t
 *
 * with m (market), s (sectors), b (rates) and e (idiosyncratic) independent normals.
 * The implied covariance is exported so tests can check the simulation against it.
 */

export const TRADING_DAYS = 252;
/** Annualized volatilities of the factors. */
export const FACTOR_VOL = { market: 0.16, sector: 0.08, rates: 0.05, fx: 0.08 } as const;
export const SECTORS = 8;
/** Currencies of the invented securities, with the share of the universe in each. */
export const CURRENCY_MIX = [
  { currency: 'USD', share: 0.7, startRate: 1 },
  { currency: 'EUR', share: 0.2, startRate: 1.1 },
  { currency: 'GBP', share: 0.1, startRate: 1.27 },
] as const;

const BOND_MARKET_BETA = 0.1;
const daily = (annualVol: number) => annualVol / Math.sqrt(TRADING_DAYS);
/** An integer in [0, n). */
const pick = (rng: Random, n: number) => Math.floor(rng.uniform() * n);

export interface SimSecurity {
  id: string;
  name: string;
  assetClass: 'equity' | 'bond';
  currency: string;
  startPrice: number;
  marketBeta: number;
  /** Equities: index of the sector factor; bonds: -1. */
  sector: number;
  /** Bonds: loading on the rates factor; equities: 0. */
  ratesLoading: number;
  /** Daily drift and idiosyncratic volatility of the log return. */
  drift: number;
  idioVol: number;
}

export function inventSecurities(count: number, rng: Random): SimSecurity[] {
  const width = Math.max(4, String(count).length);
  const out: SimSecurity[] = [];
  for (let i = 0; i < count; i++) {
    const id = `SEC-${String(i + 1).padStart(width, '0')}`;
    const isBond = i % 5 === 4;
    const draw = rng.uniform();
    let acc = 0;
    const currency = CURRENCY_MIX.find((c) => (acc += c.share) > draw)?.currency ?? 'USD';
    out.push({
      id,
      name: `Invented ${isBond ? 'bond' : 'equity'} ${id}`,
      assetClass: isBond ? 'bond' : 'equity',
      currency,
      startPrice: isBond ? 90 + 20 * rng.uniform() : 10 + 190 * rng.uniform(),
      marketBeta: isBond ? BOND_MARKET_BETA : 0.6 + 0.8 * rng.uniform(),
      sector: isBond ? -1 : pick(rng, SECTORS),
      ratesLoading: isBond ? 0.5 + rng.uniform() : 0,
      drift: (isBond ? 0.03 : 0.07) / TRADING_DAYS,
      idioVol: daily(isBond ? 0.02 + 0.03 * rng.uniform() : 0.15 + 0.25 * rng.uniform()),
    });
  }
  return out;
}

/** Model covariance of two securities' daily log returns (local currency). */
export function modelCovariance(a: SimSecurity, b: SimSecurity): number {
  let cov = a.marketBeta * b.marketBeta * daily(FACTOR_VOL.market) ** 2;
  if (a.sector >= 0 && a.sector === b.sector) cov += daily(FACTOR_VOL.sector) ** 2;
  cov += a.ratesLoading * b.ratesLoading * daily(FACTOR_VOL.rates) ** 2;
  if (a.id === b.id) cov += a.idioVol ** 2;
  return cov;
}

export interface SimulatedMarket {
  days: number;
  /** prices[day * securities + i], local currency. */
  prices: Float64Array;
  /** fxCurrencies[c]'s rate on a day: fxRates[day * fxCurrencies.length + c] (base units per unit). */
  fxCurrencies: string[];
  fxRates: Float64Array;
}

export function simulateFactorMarket(securities: SimSecurity[], days: number, rng: Random): SimulatedMarket {
  const n = securities.length;
  const prices = new Float64Array(days * n);
  const fx = CURRENCY_MIX.filter((c) => c.currency !== 'USD');
  const fxRates = new Float64Array(days * fx.length);
  const sectorMoves = new Float64Array(SECTORS);
  for (let t = 0; t < days; t++) {
    const market = daily(FACTOR_VOL.market) * rng.normal();
    for (let s = 0; s < SECTORS; s++) sectorMoves[s] = daily(FACTOR_VOL.sector) * rng.normal();
    const rates = daily(FACTOR_VOL.rates) * rng.normal();
    for (let i = 0; i < n; i++) {
      const sec = securities[i];
      if (t === 0) {
        prices[i] = sec.startPrice;
        continue;
      }
      const r =
        sec.drift +
        sec.marketBeta * market +
        (sec.sector >= 0 ? sectorMoves[sec.sector] : 0) +
        sec.ratesLoading * rates +
        sec.idioVol * rng.normal();
      prices[t * n + i] = prices[(t - 1) * n + i] * Math.exp(r);
    }
    fx.forEach((c, k) => {
      fxRates[t * fx.length + k] =
        t === 0 ? c.startRate : fxRates[(t - 1) * fx.length + k] * Math.exp(daily(FACTOR_VOL.fx) * rng.normal());
    });
  }
  return { days, prices, fxCurrencies: fx.map((c) => c.currency), fxRates };
}

export interface SimHolding {
  portfolioId: string;
  securityId: string;
  /** Quantity before the monthly trades the positions generator applies. */
  baseQuantity: number;
}

export const CASH_ID = 'CASH:USD';

/**
 * Each portfolio holds `perPortfolio` distinct securities (a partial Fisher-Yates draw)
 * of roughly equal value, plus a USD cash balance of about 2% of its value.
 */
export function inventHoldings(
  portfolios: number,
  perPortfolio: number,
  securities: SimSecurity[],
  rng: Random,
): SimHolding[] {
  if (perPortfolio > securities.length) throw new Error(`${perPortfolio} holdings need at least as many securities`);
  const out: SimHolding[] = [];
  const portfolioValue = 10_000_000;
  const order = securities.map((_, i) => i);
  for (let p = 0; p < portfolios; p++) {
    const portfolioId = `PF-${String(p + 1).padStart(2, '0')}`;
    for (let k = 0; k < perPortfolio; k++) {
      const j = k + pick(rng, order.length - k);
      [order[k], order[j]] = [order[j], order[k]];
      const sec = securities[order[k]];
      const value = (portfolioValue / perPortfolio) * (0.5 + rng.uniform());
      out.push({ portfolioId, securityId: sec.id, baseQuantity: Math.max(1, Math.round(value / sec.startPrice)) });
    }
    out.push({ portfolioId, securityId: CASH_ID, baseQuantity: Math.round(0.02 * portfolioValue) });
  }
  return out;
}
