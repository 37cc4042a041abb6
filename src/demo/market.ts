import { CholeskyDecomposition, Matrix } from 'ml-matrix';
import { createRandom } from './random.ts';
import { FX_EUR, SECURITIES, type AssetClass, type DemoSecurity } from './universe.ts';

/** A stretch of trading days (indexes into the calendar, `to` exclusive) with stressed markets. */
export interface Turbulence {
  from: number;
  to: number;
}

export interface MarketPath {
  dates: string[];
  /** Closing price in the security's own currency, rounded as a custodian sends it. */
  prices: Map<string, number[]>;
  /** USD per one EUR. */
  eurUsd: number[];
}

const DAYS_PER_YEAR = 252;
// In stress, vols rise and equities move together: common practice, no source.
const STRESS_VOL: Record<AssetClass | 'fx', number> = { equity: 3.0, commodity: 2.0, bond: 1.5, fx: 1.4 };
const STRESS_DRIFT: Record<AssetClass | 'fx', number> = { equity: -0.45, commodity: -0.2, bond: 0.02, fx: -0.05 };
const STRESS_EQUITY_LOADING = 1.4;
const MAX_LOADING_NORM = 0.95;

/** Monday-to-Friday dates from `start` (ISO 8601), `count` of them; the demo keeps no holidays. */
export function businessDays(start: string, count: number): string[] {
  const day = new Date(`${start}T00:00:00Z`);
  if (Number.isNaN(day.getTime())) throw new Error(`businessDays: "${start}" is not a YYYY-MM-DD date`);
  const out: string[] = [];
  while (out.length < count) {
    const weekday = day.getUTCDay();
    if (weekday !== 0 && weekday !== 6) out.push(day.toISOString().slice(0, 10));
    day.setUTCDate(day.getUTCDate() + 1);
  }
  return out;
}

/** C = B B' with the diagonal set to 1 (each row of B must have norm < 1 for C to be positive definite). */
export function correlationFromLoadings(loadings: number[][]): Matrix {
  for (const [i, row] of loadings.entries()) {
    const norm = Math.hypot(...row);
    if (norm >= 1) throw new Error(`loadings row ${i} has norm ${norm.toFixed(3)}; it must be below 1`);
  }
  const b = new Matrix(loadings);
  const c = b.mmul(b.transpose());
  for (let i = 0; i < c.rows; i++) c.set(i, i, 1);
  return c;
}

function stressedLoadings(row: [number, number, number, number]): number[] {
  const out = [row[0] * STRESS_EQUITY_LOADING, row[1], row[2], row[3]];
  const norm = Math.hypot(...out);
  return norm > MAX_LOADING_NORM ? out.map((x) => (x * MAX_LOADING_NORM) / norm) : out;
}

function choleskyOf(loadings: number[][]): Matrix {
  const chol = new CholeskyDecomposition(correlationFromLoadings(loadings));
  if (!chol.isPositiveDefinite()) throw new Error('demo correlation matrix is not positive definite');
  return chol.lowerTriangularMatrix;
}

/**
 * Geometric Brownian paths with correlated shocks: z ~ N(0, I), shocks L z with L the
 * Cholesky factor of the regime's correlation matrix, daily log return
 * (mu - sigma^2 / 2) / A + sigma / sqrt(A) * (L z)_i.
 */
export function simulateMarket(options: { seed: number; dates: string[]; turbulence: Turbulence }): MarketPath {
  const { dates, turbulence } = options;
  const random = createRandom(options.seed);
  type Asset = Pick<DemoSecurity, 'drift' | 'vol' | 'loadings'> & { kind: AssetClass | 'fx'; start: number; decimals: number };
  const assets: Asset[] = [
    ...SECURITIES.map((s) => ({ ...s, kind: s.assetClass, start: s.startPrice, decimals: 4 })),
    { drift: 0, vol: FX_EUR.vol, loadings: FX_EUR.loadings, kind: 'fx' as const, start: FX_EUR.startRate, decimals: 6 },
  ];
  const calm = choleskyOf(assets.map((a) => [...a.loadings]));
  const stressed = choleskyOf(assets.map((a) => (a.kind === 'equity' ? stressedLoadings(a.loadings) : [...a.loadings])));

  const level = assets.map((a) => a.start);
  const paths = assets.map((a) => [round(a.start, a.decimals)]);
  for (let t = 1; t < dates.length; t++) {
    const inStress = t >= turbulence.from && t < turbulence.to;
    const z = Matrix.columnVector(assets.map(() => random.normal()));
    const shocks = (inStress ? stressed : calm).mmul(z).to1DArray();
    assets.forEach((a, i) => {
      const vol = a.vol * (inStress ? STRESS_VOL[a.kind] : 1);
      const drift = inStress ? STRESS_DRIFT[a.kind] : a.drift;
      level[i] *= Math.exp((drift - (vol * vol) / 2) / DAYS_PER_YEAR + (vol / Math.sqrt(DAYS_PER_YEAR)) * shocks[i]);
      paths[i].push(round(level[i], a.decimals));
    });
  }
  const prices = new Map(SECURITIES.map((s, i) => [s.id, paths[i]]));
  return { dates, prices, eurUsd: paths[paths.length - 1] };
}

export function round(x: number, decimals: number): number {
  const f = 10 ** decimals;
  return Math.round(x * f) / f;
}
