import * as ss from 'simple-statistics';
import { referenceViews } from '../../helpers/referenceViews.ts';
import { scenarioDeliveries, type Scenario } from './scenario.ts';

/**
 * An independent computation of the risk tables straight from the scenario's raw rows:
 * the views' reference model (test/helpers/referenceViews.ts: carry prices forward,
 * value, weigh, take returns) and then, written plainly from SPEC section 4, log returns
 * and two-pass statistics from simple-statistics, the general-purpose reference library.
 * It shares no code with src/: agreement checks the views and the risk stage together.
 */

export interface ReferenceOptions {
  windows: number[];
  periodsPerYear: number;
  maxStaleDays: number;
  minCoverage: number;
  weights: 'current' | 'window_average';
  ewma: { lambda: number; seedDays: number } | null;
}

export interface ReferenceRow {
  portfolio: string;
  date: string;
  windowDays: number;
  estimator: 'sample' | 'ewma';
  portfolioValue: number | null;
  volExAnte: number | null;
  volRealized: number | null;
  annReturn: number | null;
  var99_1d: number | null;
  es975_1d: number | null;
  var99_10d: number | null;
  es975_10d: number | null;
  diversification: number | null;
  coverage: number | null;
  status: string;
}

// Standard normal quantiles to 16 digits (z_0.99 = 2.3263..., z_0.975 = 1.9599...,
// the printed tables give 2.326 and 1.960; the full digits are from memory).
const Z99 = 2.3263478740408408;
const Z975 = 1.959963984540054;
const phi = (z: number) => Math.exp((-z * z) / 2) / Math.sqrt(2 * Math.PI);

// only cash in the base currency (USD here) is riskless; CASH:EUR has the EUR/USD returns (SPEC §3, round 2)
const isCash = (id: string) => id === 'CASH:USD';

export function referenceRisk(s: Scenario, o: ReferenceOptions): ReferenceRow[] {
  const T = s.dates.length;
  const views = referenceViews(scenarioDeliveries(s, 0, T - 1), 'USD', o.maxStaleDays);
  if (views.valuationDates.join() !== s.dates.join()) throw new Error('every scenario date must be a valuation date');
  // the reference's positions by portfolio and date: security -> weight and whether its price is carried
  const positions = new Map<string, Map<string, { weight: number | null; priceStale: boolean }>>();
  for (const [key, position] of views.weights) {
    const cut = key.lastIndexOf('|');
    const bySecurity = positions.get(key.slice(0, cut)) ?? new Map();
    positions.set(key.slice(0, cut), bySecurity.set(key.slice(cut + 1), position));
  }
  const at = (p: string, d: number) => `${p}|${s.dates[d]}`;
  const logReturn = (id: string, d: number): number | null => views.securityLogReturns.get(`${id}|${s.dates[d]}`) ?? null;
  // weights at the close of d, or null when some position has no value
  const weightsAt = (p: string, d: number): { value: number; w: Map<string, number> } | null => {
    const value = views.portfolioValues.get(at(p, d));
    if (value === undefined || value === null) return null;
    return { value, w: new Map([...positions.get(at(p, d))!].map(([id, x]) => [id, x.weight!])) };
  };
  const portfolioLogReturn = (p: string, d: number): number | null => {
    const simple = views.portfolioReturns.get(at(p, d))?.simpleReturn;
    return simple === undefined || simple === null ? null : Math.log(1 + simple);
  };
  const series = (id: string, d: number, W: number): number[] | null => {
    const out: number[] = [];
    for (let u = d - W + 1; u <= d; u++) {
      const r = u >= 0 ? logReturn(id, u) : null;
      if (r === null) return null;
      out.push(r);
    }
    return out;
  };

  const portfolios = [...new Set(s.snapshots.map((x) => x.portfolio))].sort();
  const rows: ReferenceRow[] = [];
  const ewma = o.ewma ? ewmaReference(s, logReturn, o.ewma.lambda, o.ewma.seedDays) : null;
  for (const p of portfolios) {
    for (let d = 0; d < T; d++) {
      const held = positions.get(at(p, d));
      if (held === undefined) continue;
      const now = weightsAt(p, d);
      // stale: a carried price; past maxStaleDays the price is missing, not stale
      const stale = [...held.values()].some((x) => x.priceStale);
      for (const W of [...o.windows, ...(ewma ? [0] : [])]) {
        const estimator = W === 0 ? 'ewma' : 'sample';
        let w = now?.w ?? null;
        if (w && W > 0 && o.weights === 'window_average') w = averageWeights(p, d, W, weightsAt);
        const cov =
          W === 0
            ? { covered: (id: string) => ewma![d].has(id), s: (a: string, b: string) => ewma![d].get(a)!.get(b)! }
            : sampleCovariances(series, d, W);
        let realized: [number, number] | [null, null] = [null, null];
        if (W > 0) {
          const rp: number[] = [];
          for (let u = d - W + 1; u <= d; u++) {
            const r = u >= 0 ? portfolioLogReturn(p, u) : null;
            if (r !== null) rp.push(r);
          }
          if (rp.length === W) realized = [Math.sqrt(o.periodsPerYear) * ss.sampleStandardDeviation(rp), Math.exp(o.periodsPerYear * ss.mean(rp)) - 1];
        }
        rows.push({
          portfolio: p,
          date: s.dates[d],
          windowDays: W,
          estimator,
          portfolioValue: now?.value ?? null,
          volRealized: realized[0],
          annReturn: realized[1],
          ...figures(w, now?.value ?? null, stale, cov, o),
        });
      }
    }
  }
  return rows;
}

interface Covariances {
  covered(id: string): boolean;
  s(a: string, b: string): number;
}

function sampleCovariances(series: (id: string, d: number, W: number) => number[] | null, d: number, W: number): Covariances {
  return {
    covered: (id) => !isCash(id) && series(id, d, W) !== null,
    s: (a, b) => ss.sampleCovariance(series(a, d, W)!, series(b, d, W)!),
  };
}

function averageWeights(
  p: string,
  d: number,
  W: number,
  weightsAt: (p: string, d: number) => { w: Map<string, number> } | null,
): Map<string, number> {
  const sum = new Map<string, number>();
  let days = 0;
  for (let u = Math.max(0, d - W + 1); u <= d; u++) {
    const at = weightsAt(p, u);
    if (at === null) continue;
    days++;
    for (const [id, w] of at.w) sum.set(id, (sum.get(id) ?? 0) + w);
  }
  return new Map([...sum].map(([id, w]) => [id, w / days]));
}

type Figures = Omit<ReferenceRow, 'portfolio' | 'date' | 'windowDays' | 'estimator' | 'portfolioValue' | 'volRealized' | 'annReturn'>;

function figures(w: Map<string, number> | null, value: number | null, stale: boolean, cov: Covariances, o: ReferenceOptions): Figures {
  const none = { volExAnte: null, var99_1d: null, es975_1d: null, var99_10d: null, es975_10d: null, diversification: null };
  const staleTag = stale ? ['stale_prices'] : [];
  if (w === null || value === null) return { ...none, coverage: null, status: ['unpriced', ...staleTag].join(',') };
  if (value <= 0) return { ...none, coverage: null, status: ['value_not_positive', ...staleTag].join(',') };
  let gross = 0;
  let covered = 0;
  const inCov: string[] = [];
  for (const [id, wi] of w) {
    gross += Math.abs(wi);
    if (isCash(id)) covered += Math.abs(wi);
    else if (cov.covered(id)) {
      covered += Math.abs(wi);
      inCov.push(id);
    }
  }
  const coverage = covered / gross;
  const reason = coverage < o.minCoverage ? ['insufficient_history'] : coverage < 1 ? ['partial_history'] : [];
  const status = [...reason, ...staleTag].join(',') || 'ok';
  if (coverage < o.minCoverage) return { ...none, coverage, status };
  let variance = 0;
  let standAlone = 0;
  for (const a of inCov) {
    for (const b of inCov) variance += w.get(a)! * w.get(b)! * cov.s(a, b);
    standAlone += Math.abs(w.get(a)!) * Math.sqrt(o.periodsPerYear * cov.s(a, a));
  }
  const vol = Math.sqrt(o.periodsPerYear * variance);
  const dailyLoss = (vol / Math.sqrt(o.periodsPerYear)) * Math.abs(value);
  return {
    volExAnte: vol,
    var99_1d: Z99 * dailyLoss,
    es975_1d: (phi(Z975) / 0.025) * dailyLoss,
    var99_10d: Z99 * dailyLoss * Math.sqrt(10),
    es975_10d: (phi(Z975) / 0.025) * dailyLoss * Math.sqrt(10),
    diversification: vol > 0 ? standAlone / vol : null,
    coverage,
    status,
  };
}

/**
 * The EWMA written as the plain recursion, per pair, with the seeding rule of the
 * README: a security enters on the date it has seedDays consecutive returns, its
 * entries set to the EWMA-weighted cross moments of those dates (a newcomer's factor
 * 1 / sqrt(1 - lambda^seedDays)); then S = lambda S + (1 - lambda) r r'.
 */
export function ewmaReference(
  s: Scenario,
  logReturn: (id: string, d: number) => number | null,
  lambda: number,
  seedDays: number,
): Map<string, Map<string, number>>[] {
  // cash in another currency is a member like any security: its returns are the fx returns
  const foreignCash = [...new Set(s.snapshots.flatMap((x) => Object.keys(x.quantities)))].filter((id) => id.startsWith('CASH:') && !isCash(id));
  const ids = [...s.securities.map((x) => x.id), ...foreignCash.sort()];
  let S = new Map<string, Map<string, number>>();
  const out: Map<string, Map<string, number>>[] = [];
  for (let d = 0; d < s.dates.length; d++) {
    const r = new Map(ids.map((id) => [id, logReturn(id, d)]));
    const next = new Map<string, Map<string, number>>();
    const stay = [...S.keys()].filter((id) => r.get(id) !== null);
    for (const a of stay) next.set(a, new Map(stay.map((b) => [b, lambda * S.get(a)!.get(b)! + (1 - lambda) * r.get(a)! * r.get(b)!])));
    const run = (id: string) => {
      let n = 0;
      while (d - n >= 0 && logReturn(id, d - n) !== null) n++;
      return n;
    };
    const newcomers = ids.filter((id) => !next.has(id) && run(id) >= seedDays);
    const members = [...stay, ...newcomers];
    for (const a of newcomers) next.set(a, new Map());
    const scale = 1 / Math.sqrt(1 - lambda ** seedDays);
    for (const a of newcomers) {
      for (const b of members) {
        let m = 0;
        for (let k = 0; k < seedDays; k++) m += (1 - lambda) * lambda ** k * logReturn(a, d - k)! * logReturn(b, d - k)!;
        const v = m * scale * (newcomers.includes(b) ? scale : 1);
        next.get(a)!.set(b, v);
        next.get(b)!.set(a, v);
      }
    }
    S = next;
    out.push(S);
  }
  return out;
}
