import os from 'node:os';
import { afterEach, describe, expect, it, vi } from 'vitest';
import { runRecompute } from '../../../src/batch/runRecompute.ts';
import { registerEstimator, registerEstimatorModule } from '../../../src/risk/estimators/registry.ts';
import { readBenchmarkPanel } from '../../../src/risk/inputs/benchmarkPanel.ts';
import { readPortfolioPanel, readReturnPanel, readValuationDates } from '../../../src/risk/inputs/panels.ts';
import { computeRisk } from '../../../src/risk/runtime/computeRisk.ts';
import { referenceViews } from '../../helpers/referenceViews.ts';
import { tempWorkspace, type TempWorkspace } from '../../helpers/workspace.ts';
import { expectSameRows, readDaily } from './compare.ts';
import { estimator as constantDiagonal, SIGMA } from './constantDiagonal.ts';
import { buildScenario, loadDays, RISK, scenarioDeliveries } from './scenario.ts';

// as in incremental.test.ts: DuckDB's parallel sums may move the last bits of the views between two runs
const AGREE = 1e-10;

describe('the estimator registry', () => {
  let ws: TempWorkspace | undefined;
  let unregister: (() => void) | undefined;
  afterEach(async () => {
    unregister?.();
    unregister = undefined;
    await ws?.cleanup();
  });

  /** The threads of the run's compute, from its 'risk compute plan' log record. */
  const threadsOfLastRun = (w: TempWorkspace) => w.logLines().filter((l) => l.msg === 'risk compute plan').at(-1)?.threads;

  it('runs an estimator registered by its module, on the main thread and in worker threads: its rows reach risk_daily, the other estimators rows stay as they were', async () => {
    const s = buildScenario();
    ws = await tempWorkspace({ risk: RISK });
    await loadDays(ws.db, s, 0, s.dates.length - 1);
    const cores = vi.spyOn(os, 'availableParallelism').mockReturnValue(1);
    await runRecompute(ws.db, ws.config, ws.log, { trigger: 'test' });
    const without = await readDaily(ws.db);

    unregister = await registerEstimatorModule(new URL('./constantDiagonal.ts', import.meta.url));
    await runRecompute(ws.db, ws.config, ws.log, { trigger: 'test' });
    expect(threadsOfLastRun(ws)).toBe(1);
    const all = await readDaily(ws.db);
    // the toy's cost reaches the cost model's threshold: with cores, the run takes worker threads
    cores.mockReturnValue(4);
    await runRecompute(ws.db, ws.config, ws.log, { trigger: 'test' });
    cores.mockRestore();
    expect(threadsOfLastRun(ws)).toBeGreaterThan(1);
    const threaded = await readDaily(ws.db);
    expectSameRows(threaded, all, AGREE);

    const toy = all.filter((r) => r.estimator === 'constant_diagonal');
    expectSameRows(
      all.filter((r) => r.estimator !== 'constant_diagonal'),
      without,
      AGREE,
    );

    // one row per portfolio and date, as the EWMA (the other estimate present on every date) has
    const slots = (rows: typeof all) => rows.map((r) => `${r.portfolio_id}|${r.date}`).sort();
    expect(toy.length).toBeGreaterThan(300);
    expect(slots(toy)).toEqual(slots(all.filter((r) => r.estimator === 'ewma')));

    // By hand: with S = sigma^2 I the annualized volatility is sigma sqrt(252 sum_j w_j^2) over
    // the holdings that carry risk (all but the base-currency cash, which SPEC section 3 makes
    // riskless). The weights come from the tests' own model of the views, not from src/.
    const views = referenceViews(scenarioDeliveries(s, 0, s.dates.length - 1), 'USD', 5);
    let checked = 0;
    for (const row of toy) {
      const weights = [...views.weights].filter(([key]) => key.startsWith(`${row.portfolio_id}|${row.date}|`));
      if (weights.some(([, position]) => position.weight === null)) {
        expect(row.vol_ex_ante).toBeNull();
        continue;
      }
      const squares = weights.filter(([key]) => !key.endsWith('|CASH:USD')).reduce((sum, [, position]) => sum + position.weight! ** 2, 0);
      expect(row.vol_ex_ante as number).toBeCloseTo(SIGMA * Math.sqrt(252 * squares), 12);
      expect(row.vol_realized).toBeNull();
      checked++;
    }
    expect(checked).toBeGreaterThan(300);
  });

  it('refuses a second estimator of the same name', () => {
    unregister = registerEstimator(constantDiagonal);
    expect(() => registerEstimator({ ...constantDiagonal })).toThrow('estimator constant_diagonal is registered twice');
    expect(() => registerEstimator({ ...constantDiagonal, name: 'sample' })).toThrow('estimator sample is registered twice');
  });

  it('says so when a run sends an estimator registered at run time by its object, not its module, to a worker thread', async () => {
    const s = buildScenario(60);
    ws = await tempWorkspace({ risk: RISK });
    await loadDays(ws.db, s, 0, s.dates.length - 1);
    const dates = await readValuationDates(ws.db);
    const returns = await readReturnPanel(ws.db, dates, 0);
    const portfolios = await readPortfolioPanel(ws.db, dates.length, 0, null);
    const benchmarks = await readBenchmarkPanel(ws.db, ws.config, portfolios.ids, dates.length, 0);
    unregister = registerEstimator(constantDiagonal);
    const quiet = { advance: () => undefined, finish: () => undefined };
    const run = computeRisk({ returns, portfolios, benchmarks, fromRow: 0, states: {} }, ws.config, () => undefined, quiet, ws.log, { threads: 2 });
    await expect(run).rejects.toThrow(/worker thread: no estimator named constant_diagonal is registered in this thread \(one added at run time reaches the worker threads through registerEstimatorModule\)/);
  });
});
