import { afterEach, describe, expect, it } from 'vitest';
import type { ConfigInput } from '../../../src/config/schema.ts';
import { computeRisk, type ComputeInputs } from '../../../src/risk/runtime/computeRisk.ts';
import { PARALLEL_MIN_COST, threadsFor } from '../../../src/risk/runtime/costModel.ts';
import { EwmaEstimate, type EwmaState } from '../../../src/risk/estimators/ewma.ts';
import { readBenchmarkPanel } from '../../../src/risk/inputs/benchmarkPanel.ts';
import { readPortfolioPanel, readReturnPanel, readValuationDates } from '../../../src/risk/inputs/panels.ts';
import { DAILY_FIGURES } from '../../../src/risk/walk/figures.ts';
import type { ResultBatch } from '../../../src/risk/walk/resultColumns.ts';
import { createRandom } from '../../../src/demo/random.ts';
import { randomHoldings, randomReturnPanel } from '../../helpers/returnPanel.ts';
import { tempWorkspace, type TempWorkspace } from '../../helpers/workspace.ts';
import { buildScenario, loadDays, RISK } from './scenario.ts';

const quiet = { advance: () => undefined, finish: () => undefined };

/** Every row of every batch as text (String(x) round-trips a double exactly), sorted: arrival order aside, equal means bit for bit. */
function rowsOf(batches: ResultBatch[]): string[] {
  const rows: string[] = [];
  for (const b of batches) {
    const tag = `${b.estimator}|${b.windowDays}`;
    const { daily: d, contributions: c, active: a, securities: s, volChange: v, volChangeSecurities: vs } = b;
    for (let i = 0; i < d.rows; i++) {
      const figures = d.figures.map((f) => String(f[i]));
      expect(figures.length).toBe(DAILY_FIGURES.length);
      rows.push(`daily|${tag}|${d.portfolio[i]}|${d.row[i]}|${figures.join(',')}|${b.statuses[d.status[i]]}|${d.nHoldings[i]}|${d.nCovered[i]}`);
    }
    for (let i = 0; i < c.rows; i++) rows.push(`contribution|${tag}|${c.portfolio[i]}|${c.row[i]}|${c.security[i]}|${c.values.map((v) => String(v[i]))}`);
    for (let i = 0; i < a.rows; i++) rows.push(`active|${tag}|${a.portfolio[i]}|${a.row[i]}|${a.security[i]}|${a.values.map((v) => String(v[i]))}`);
    for (let i = 0; i < s.rows; i++) rows.push(`security|${tag}|${s.row[i]}|${s.security[i]}|${s.annReturn[i]}|${s.annVol[i]}`);
    for (let i = 0; i < v.rows; i++) {
      rows.push(`vol_change|${tag}|${v.portfolio[i]}|${v.row[i]}|${v.figures.map((f) => String(f[i]))}|${b.statuses[v.status[i]]}|${v.driver[i]}`);
    }
    for (let i = 0; i < vs.rows; i++) rows.push(`vol_change_security|${tag}|${vs.portfolio[i]}|${vs.row[i]}|${vs.security[i]}|${vs.values.map((x) => String(x[i]))}`);
  }
  return rows.sort();
}

/**
 * 40 securities (one of them cash, one with a hole, one listed late) and 3 portfolios of
 * 5 to 7 holdings that change every 50 days: wide enough that the short window takes the
 * window path and the long one the sliding path. acct-birch is measured against a
 * benchmark of 12 equal weights that changes half way.
 */
function wideInputs(t = 420, n = 40): ComputeInputs {
  const random = createRandom(99);
  const returns = randomReturnPanel(random, t, n, {
    drift: 0,
    loading: (j) => 0.4 + j / n,
    missing: (d, j) => d === 0 || j === 0 || (j === 3 && d >= 200 && d < 204) || (j === 7 && d < 260),
    securityId: (j) => (j === 0 ? 'CASH:USD' : `EQ-WIDE-${j}`),
  });
  returns.isCash[0] = 1;
  const ids = ['acct-alder', 'acct-birch', 'acct-cedar'];
  const slots = ids.length * t;
  const { offsets, security, weight } = randomHoldings(random, ids.length, t, n, 50, (p) => 6 + p);
  return {
    returns,
    portfolios: {
      ids,
      firstRow: 0,
      present: new Uint8Array(slots).fill(1),
      value: Float64Array.from({ length: slots }, () => 1e6 * (1 + random.uniform())),
      unpriced: new Uint8Array(slots),
      stale: Uint8Array.from({ length: slots }, (_, s) => (s % 97 === 0 ? 1 : 0)),
      logReturn: Float64Array.from({ length: slots }, (_, s) => (s % t === 0 ? Number.NaN : 0.008 * random.normal())),
      offsets,
      security,
      weight,
    },
    benchmarks: halfWayBenchmark(random, t, ids.length),
    fromRow: 0,
    states: {},
  };
}

function halfWayBenchmark(random: ReturnType<typeof createRandom>, t: number, portfolioCount: number): ComputeInputs['benchmarks'] {
  const offsets = new Int32Array(t + 1);
  const security: number[] = [];
  for (let d = 0; d < t; d++) {
    for (let j = 0; j < 12; j++) security.push(d < t / 2 ? 1 + j : 20 + j);
    offsets[d + 1] = security.length;
  }
  const ofPortfolio = new Int32Array(portfolioCount).fill(-1);
  ofPortfolio[1] = 0;
  return {
    ids: ['bm-wide'],
    ofPortfolio,
    logReturn: Float64Array.from({ length: t }, (_, d) => (d === 0 ? Number.NaN : 0.007 * random.normal())),
    offsets,
    security: Int32Array.from(security),
    weight: new Float64Array(security.length).fill(1 / 12),
  };
}

describe('computeRisk in worker threads', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  async function inputsFor(risk: ConfigInput['risk'], fromDay = 0): Promise<ComputeInputs> {
    ws = await tempWorkspace({ risk });
    const s = buildScenario();
    await loadDays(ws.db, s, 0, s.dates.length - 1);
    const dates = await readValuationDates(ws.db);
    const returns = await readReturnPanel(ws.db, dates, 0);
    const portfolios = await readPortfolioPanel(ws.db, dates.length, 0, null);
    const benchmarks = await readBenchmarkPanel(ws.db, ws.config, portfolios.ids, dates.length, 0);
    return { returns, portfolios, benchmarks, fromRow: fromDay, states: {} };
  }

  async function run(input: ComputeInputs, threads: number) {
    const batches: ResultBatch[] = [];
    const states = await computeRisk(input, ws!.config, (b) => batches.push(b), quiet, ws!.log, { threads });
    const ewma = (states.ewma ?? []) as EwmaState[];
    return { rows: rowsOf(batches), ewma };
  }

  it('gives the same rows bit for bit as the main thread: both sample paths, the shrunk estimate, the EWMA and every contribution', async () => {
    ws = await tempWorkspace({ risk: { ...RISK, windows: [21, 63, 150], contributions: 'all', shrunk: { windows: [21] } } });
    const input = wideInputs();
    const one = await run(input, 1);
    const two = await run(input, 2);
    const paths = ws.logLines().filter((l) => l.msg === 'sample covariance path').map((l) => `${l.windowDays}:${l.path}`);
    expect(paths).toContain('21:window');
    expect(paths).toContain('150:sliding');
    expect(one.rows.length).toBeGreaterThan(20_000);
    expect(one.rows.some((r) => r.startsWith('daily|shrunk|21|'))).toBe(true);
    expect(one.rows.filter((r) => r.startsWith('active|')).length).toBeGreaterThan(1_000);
    expect(two.rows).toEqual(one.rows);
    // the states of the last two dates
    expect(one.ewma.map((s) => s.row)).toEqual([418, 419]);
    expect(two.ewma.map((s) => s.securityIds)).toEqual(one.ewma.map((s) => s.securityIds));
    expect(two.ewma.map((s) => Array.from(s.matrix, String))).toEqual(one.ewma.map((s) => Array.from(s.matrix, String)));
  });

  it('agrees with weights "window_average" and a run from a later date continuing the EWMA state', async () => {
    const input = await inputsFor({ ...RISK, weights: 'window_average' });
    const first = await run(input, 1);
    // the EWMA state of the day before, as the stored state would give it
    const last = input.returns.dates.length - 1;
    const before = new EwmaEstimate(input.returns, 0.94, 10, null);
    for (let d = 0; d < last; d++) before.advance(d);
    const later = { ...input, fromRow: last, states: { ewma: before.snapshot() } };
    expect(first.rows.length).toBeGreaterThan(1_000);
    expect((await run(input, 3)).rows).toEqual(first.rows);
    expect((await run(later, 2)).rows).toEqual((await run(later, 1)).rows);
  });

  it('reports a failure inside a worker as the run failing, with the reason', async () => {
    const input = await inputsFor(RISK);
    // every security named (so the state is continued), but one value for all of them
    const ids = input.returns.securityIds;
    const broken = { ...input, fromRow: 100, states: { ewma: { row: 99, securityIds: ids, matrix: Float64Array.from([1e-4]) } } };
    await expect(run(broken, 2)).rejects.toThrow(new RegExp(`worker thread: EWMA state: a matrix of 1 values for ${ids.length} securities`));
  });
});

describe('threadsFor (cost model)', () => {
  it('stays on this thread below PARALLEL_MIN_COST and takes one thread per task up to the cores above it', () => {
    expect(threadsFor(PARALLEL_MIN_COST / 2, 4, 2)).toBe(1);
    expect(threadsFor(PARALLEL_MIN_COST, 4, 2)).toBe(2);
    expect(threadsFor(PARALLEL_MIN_COST * 10, 3, 8)).toBe(3);
    expect(threadsFor(PARALLEL_MIN_COST * 10, 4, 1)).toBe(1);
  });
});
