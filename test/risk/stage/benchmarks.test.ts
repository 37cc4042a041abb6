import { afterEach, describe, expect, it } from 'vitest';
import { sampleCovariance, sampleStandardDeviation } from 'simple-statistics';
import { runRecompute } from '../../../src/batch/runRecompute.ts';
import type { ConfigInput } from '../../../src/config/schema.ts';
import { businessDays } from '../../../src/demo/market.ts';
import { createRandom } from '../../../src/demo/random.ts';
import { ingestFile } from '../../../src/ingest/ingestFile.ts';
import { writeCsv } from '../../helpers/files.ts';
import { insertPositions, insertPrices } from '../../helpers/rawRows.ts';
import { tempWorkspace, type TempWorkspace } from '../../helpers/workspace.ts';

/**
 * Tracking error, beta and active contributions of the risk stage against an
 * independent computation from the same invented prices: log returns, the sample
 * covariance (simple-statistics 7.x `sampleCovariance`, divisor n - 1) and the sample
 * standard deviation (`sampleStandardDeviation`), with the formulas of SPEC section 9.
 */

const WINDOW = 21;
const A = 252;
const DATES = businessDays('2025-03-03', 40);
const SECURITIES = ['EQ-ALDER', 'EQ-BIRCH', 'EQ-CEDAR', 'EQ-DOGWOOD', 'EQ-ELM'];
// acct-tracked holds the first four and cash; the benchmark holds three of them and EQ-ELM, which no one holds
const QUANTITIES: Record<string, number> = { 'EQ-ALDER': 120, 'EQ-BIRCH': 80, 'EQ-CEDAR': 300, 'EQ-DOGWOOD': 50, 'CASH:USD': 1500 };
const BENCHMARK: Record<string, number> = { 'EQ-ALDER': 0.3, 'EQ-BIRCH': 0.3, 'EQ-CEDAR': 0.2, 'EQ-ELM': 0.2 };

function invent(): Record<string, number[]> {
  const random = createRandom(715);
  const prices: Record<string, number[]> = {};
  SECURITIES.forEach((id, i) => {
    const path = [40 + 10 * i];
    for (let d = 1; d < DATES.length; d++) path.push(path[d - 1] * Math.exp(0.0003 + (0.008 + 0.003 * i) * random.normal()));
    prices[id] = path;
  });
  return prices;
}

const PRICES = invent();
const RISK: ConfigInput['risk'] = { windows: [WINDOW], tradingDaysPerYear: A };

async function workspace(config: Partial<ConfigInput>, withBenchmarkFile: boolean): Promise<TempWorkspace> {
  const ws = await tempWorkspace({ risk: RISK, limits: [], ...config });
  await insertPrices(ws.db, 1, DATES.flatMap((date, d) => SECURITIES.map((id) => [date, id, PRICES[id][d], null])));
  await insertPositions(ws.db, 2, [
    ...Object.entries(QUANTITIES).map(([id, q]) => [DATES[0], 'acct-tracked', id, q]),
    [DATES[0], 'acct-free', 'EQ-BIRCH', 10],
    [DATES[0], 'acct-free', 'EQ-DOGWOOD', 30],
  ]);
  if (withBenchmarkFile) {
    const rows = [['date', 'benchmark_id', 'security_id', 'weight'], ...Object.entries(BENCHMARK).map(([id, b]) => [DATES[0], 'bm-core', id, b])];
    const outcome = await ingestFile(ws.db, ws.config, ws.log, writeCsv(ws.config.inbox, 'benchmarks_core.csv', rows));
    expect(outcome).toMatchObject({ status: 'ingested', kind: 'benchmarks', rows: 4 });
  }
  await runRecompute(ws.db, ws.config, ws.log, { trigger: 'test' });
  return ws;
}

/** The reference: the portfolio's weights at date row d, from quantities and prices. */
function weightsAt(d: number): Record<string, number> {
  const values = Object.fromEntries(Object.entries(QUANTITIES).map(([id, q]) => [id, q * (id.startsWith('CASH:') ? 1 : PRICES[id][d])]));
  const total = Object.values(values).reduce((a, b) => a + b, 0);
  return Object.fromEntries(Object.entries(values).map(([id, v]) => [id, v / total]));
}

function logReturns(id: string, lastRow: number): number[] {
  return Array.from({ length: WINDOW }, (_, u) => Math.log(PRICES[id][lastRow - WINDOW + 1 + u] / PRICES[id][lastRow - WINDOW + u]));
}

/** r_t = ln(1 + sum_i w_i,t-1 (P_i,t / P_i,t-1 - 1)), cash earning 0. */
function holdingsLogReturn(weights: Record<string, number>, d: number): number {
  let r = 0;
  for (const [id, w] of Object.entries(weights)) if (!id.startsWith('CASH:')) r += w * (PRICES[id][d] / PRICES[id][d - 1] - 1);
  return Math.log(1 + r);
}

/** Same rows: numbers equal to 1e-13 relative (or both null), everything else exactly. */
function expectSameFigures(actual: Record<string, unknown>[], expected: Record<string, unknown>[]): void {
  expect(expected.length).toBeGreaterThan(0);
  expect(actual).toHaveLength(expected.length);
  expected.forEach((want, i) => {
    expect(Object.keys(actual[i])).toEqual(Object.keys(want));
    for (const [key, value] of Object.entries(want)) {
      const got = actual[i][key];
      if (typeof value === 'number') expect(Math.abs((got as number) - value), `row ${i} ${key}`).toBeLessThanOrEqual(1e-13 * Math.abs(value));
      else expect(got, `row ${i} ${key}`).toEqual(value);
    }
  });
}

let workspaces: TempWorkspace[] = [];
afterEach(() => {
  for (const ws of workspaces) ws.cleanup();
  workspaces = [];
});

describe('tracking error against a benchmark', () => {
  it('matches an independent computation of sqrt(A a\'Sa), the realized tracking error, the beta and the active contributions', async () => {
    const ws = await workspace({ benchmarks: { 'acct-tracked': 'bm-core' } }, true);
    workspaces.push(ws);
    const last = DATES.length - 1;
    const [row] = await ws.db.all<Record<string, number | string | null>>(
      `select benchmark_id, tracking_error_ex_ante, tracking_error_realized, beta_to_benchmark
       from risk_daily where portfolio_id = 'acct-tracked' and estimator = 'sample' and date = $1`,
      [DATES[last]],
    );

    const w = weightsAt(last);
    const ids = SECURITIES;
    const weight = (id: string) => w[id] ?? 0;
    const bench = (id: string) => BENCHMARK[id] ?? 0;
    const series = Object.fromEntries(ids.map((id) => [id, logReturns(id, last)]));
    const s = (x: string, y: string) => sampleCovariance(series[x], series[y]);
    let activeVariance = 0;
    let wSb = 0;
    let bSb = 0;
    for (const x of ids) {
      for (const y of ids) {
        activeVariance += (weight(x) - bench(x)) * s(x, y) * (weight(y) - bench(y));
        wSb += weight(x) * s(x, y) * bench(y);
        bSb += bench(x) * s(x, y) * bench(y);
      }
    }
    const teExAnte = Math.sqrt(A * activeVariance);
    // active log returns over the window, each day from the weights of the day before
    const active = Array.from({ length: WINDOW }, (_, u) => {
      const d = last - WINDOW + 1 + u;
      return holdingsLogReturn(weightsAt(d - 1), d) - holdingsLogReturn(BENCHMARK, d);
    });
    expect(row.benchmark_id).toBe('bm-core');
    expect(row.tracking_error_ex_ante as number).toBeCloseTo(teExAnte, 12);
    expect(row.tracking_error_realized as number).toBeCloseTo(Math.sqrt(A) * sampleStandardDeviation(active), 12);
    expect(row.beta_to_benchmark as number).toBeCloseTo(wSb / bSb, 12);
    expect(teExAnte).toBeGreaterThan(0.005);

    const contributions = await ws.db.all<{ security_id: string; weight: number; benchmark_weight: number; active_weight: number; ccr: number; pct: number }>(
      `select security_id, weight, benchmark_weight, active_weight, ccr, pct from risk_active_contributions
       where portfolio_id = 'acct-tracked' and estimator = 'sample' and date = $1 order by security_id`,
      [DATES[last]],
    );
    // every security of either side: cash and EQ-DOGWOOD only held, EQ-ELM only in the benchmark
    expect(contributions.map((c) => c.security_id)).toEqual(['CASH:USD', ...ids]);
    const elm = contributions.find((c) => c.security_id === 'EQ-ELM')!;
    expect(elm).toMatchObject({ weight: 0, benchmark_weight: 0.2, active_weight: -0.2 });
    // Euler: ccr_i = a_i A (S a)_i / TE, adding up to TE (common practice; Litterman 1996, from memory)
    for (const c of contributions.filter((c) => !c.security_id.startsWith('CASH:'))) {
      let sa = 0;
      for (const y of ids) sa += s(c.security_id, y) * (weight(y) - bench(y));
      expect(c.ccr).toBeCloseTo(((weight(c.security_id) - bench(c.security_id)) * A * sa) / teExAnte, 12);
    }
    expect(contributions.reduce((sum, c) => sum + c.ccr, 0)).toBeCloseTo(teExAnte, 12);
    expect(contributions.reduce((sum, c) => sum + c.pct, 0)).toBeCloseTo(1, 12);

    // the EWMA rows have an ex-ante figure and no realized one; the unmapped portfolio has none
    const [ewma] = await ws.db.all<{ te: number | null; realized: number | null }>(
      `select tracking_error_ex_ante as te, tracking_error_realized as realized from risk_daily
       where portfolio_id = 'acct-tracked' and estimator = 'ewma' and date = $1`,
      [DATES[last]],
    );
    expect(ewma.te).toBeGreaterThan(0);
    expect(ewma.realized).toBeNull();
    const free = await ws.db.all(
      `select count(*)::integer as n from risk_daily where portfolio_id = 'acct-free'
       and (benchmark_id is not null or tracking_error_ex_ante is not null or tracking_error_realized is not null or beta_to_benchmark is not null)`,
    );
    expect(free).toEqual([{ n: 0 }]);
  });

  it('leaves every figure of the portfolios as it was without benchmarks (compared with a run that has none)', async () => {
    const before = await workspace({}, false);
    const after = await workspace({ benchmarks: { 'acct-tracked': 'bm-core' } }, true);
    workspaces.push(before, after);
    const figures = `select portfolio_id, date::varchar as date, window_days, estimator, portfolio_value, vol_ex_ante, vol_realized,
      ann_return, var_99_1d, es_975_1d, var_99_10d, es_975_10d, diversification_ratio, coverage, status, n_holdings
      from risk_daily order by all`;
    const contributions = 'select portfolio_id, date::varchar as date, window_days, estimator, security_id, weight, mcr, ccr, pct from risk_contributions order by all';
    const unmapped = (rows: Record<string, unknown>[]) => rows.filter((r) => r.portfolio_id === 'acct-free');
    const mapped = (rows: Record<string, unknown>[]) => rows.filter((r) => r.portfolio_id === 'acct-tracked');
    const old = await before.db.all(figures);
    const now = await after.db.all(figures);
    expect(unmapped(old).length).toBeGreaterThan(20);
    // bit for bit where no benchmark is set
    expect(unmapped(now)).toEqual(unmapped(old));
    expect(unmapped(await after.db.all(contributions))).toEqual(unmapped(await before.db.all(contributions)));
    // the benchmarked portfolio's own figures too, to the last bits: its weights are sums
    // over the views, whose order of addition DuckDB does not fix
    expectSameFigures(mapped(now), mapped(old));
    expectSameFigures(mapped(await after.db.all(contributions)), mapped(await before.db.all(contributions)));
    expect(await before.db.all('select count(*)::integer as n from risk_active_contributions')).toEqual([{ n: 0 }]);
  });

  it('has no tracking error before the benchmark\'s first snapshot, and none for a benchmark never delivered', async () => {
    const ws = await workspace({ benchmarks: { '*': 'bm-missing', 'acct-tracked': 'bm-core' } }, false);
    workspaces.push(ws);
    const rows = await ws.db.all<{ portfolio_id: string; benchmark_id: string; n: number; with_te: number }>(
      `select portfolio_id, benchmark_id, count(*)::integer as n, count(tracking_error_ex_ante)::integer as with_te
       from risk_daily group by all order by portfolio_id`,
    );
    expect(rows).toEqual([
      { portfolio_id: 'acct-free', benchmark_id: 'bm-missing', n: rows[0].n, with_te: 0 },
      { portfolio_id: 'acct-tracked', benchmark_id: 'bm-core', n: rows[1].n, with_te: 0 },
    ]);
  });
});
