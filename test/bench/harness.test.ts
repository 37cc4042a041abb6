import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import * as ss from 'simple-statistics';
import { afterEach, describe, expect, it } from 'vitest';
import { FIGURE_KEYS, figure, unavailable } from '../../bench/figures.ts';
import { runBench } from '../../bench/harness.ts';
import { median, peakResidentBytes } from '../../bench/measure.ts';
import { formatResult } from '../../bench/report.ts';
import { numpyAvailable } from '../../bench/stages/numpyReference.ts';
import { memoryLogger } from '../../src/log/logger.ts';

const hasNumpy = numpyAvailable();

// Timings are never asserted: CI machines differ. These tests check the shape of what
// the harness reports and the arithmetic of its verdicts.

describe('figure', () => {
  it('takes the median of its runs, as simple-statistics median does', () => {
    const runs = [4.2, 1.5, 9.9, 3.3];
    expect(figure('backfill_seconds', 'large', runs).value).toBe(ss.median(runs));
    expect(median([3, 1, 2])).toBe(ss.median([3, 1, 2]));
  });

  it('judges a "max" goal and says by how much it was missed', () => {
    // issue 13: a full large backfill in under 30 s
    const slow = figure('backfill_seconds', 'large', [36]);
    expect(slow.verdict).toBe('missed');
    expect(slow.shortfall).toBe('20% over: 6 s above the goal of 30 s');
    expect(figure('backfill_seconds', 'large', [29]).verdict).toBe('met');
  });

  it('judges a "min" goal and leaves a goal set for another size unjudged', () => {
    const ingest = figure('ingest_rows_per_second', 'large', [750_000]);
    expect(ingest.verdict).toBe('missed');
    expect(ingest.shortfall).toBe('25% under: 250,000 rows/s below the goal of 1,000,000 rows/s');
    const small = figure('backfill_seconds', 'small', [500]);
    expect(small).toMatchObject({ verdict: 'no_goal', goal: null, shortfall: null });
  });

  it('marks a figure that could not be measured, with the reason and no value', () => {
    expect(unavailable('new_day_latency_seconds', 'watch is not built yet')).toMatchObject({
      value: null,
      verdict: 'unavailable',
      note: 'watch is not built yet',
    });
  });
});

describe('peakResidentBytes', () => {
  it('reads a high-water mark no lower than the current resident set Node reports (proc(5) VmHWM >= VmRSS)', () => {
    const peak = peakResidentBytes(process.pid);
    if (peak === null) return expect(process.platform).not.toBe('linux');
    expect(peak).toBeGreaterThanOrEqual(process.memoryUsage().rss * 0.99);
  });

  it('gives null for a process that does not exist', () => {
    expect(peakResidentBytes(2 ** 22 + 1)).toBeNull();
  });
});

describe('runBench at the tiny size', () => {
  const dirs: string[] = [];
  afterEach(() => {
    for (const d of dirs.splice(0)) rmSync(d, { recursive: true, force: true });
  });

  it('measures every figure in order, consistent with its own details, writes the same JSON and removes its workspace', async () => {
    const resultsDir = mkdtempSync(path.join(tmpdir(), 'riskfold-bench-results-'));
    dirs.push(resultsDir);
    const { log } = memoryLogger('warn');
    const result = await runBench({ size: 'tiny', resultsDir, log });

    expect(result.figures.map((f) => f.key)).toEqual([...FIGURE_KEYS]);
    // a stage that throws leaves its figures "unavailable" with the error as the note:
    // only the memory figure may be missing, and only where /proc does not exist, and the
    // numpy comparison where Python or numpy is
    const missing = result.figures.filter((f) => f.verdict === 'unavailable');
    const mayMiss = [...(process.platform === 'linux' ? [] : ['worker_peak_memory_mib']), ...(hasNumpy ? [] : ['riskfold_vs_numpy'])];
    expect(
      missing.map((f) => f.key),
      missing.map((f) => `${f.key}: ${f.note}`).join('; '),
    ).toEqual(FIGURE_KEYS.filter((k) => mayMiss.includes(k)));
    if (!hasNumpy) expect(result.figures.find((f) => f.key === 'riskfold_vs_numpy')?.note).toMatch(/^skipped: /);
    const measured = new Map(result.figures.filter((f) => f.verdict !== 'unavailable').map((f) => [f.key, f]));
    for (const f of measured.values()) {
      expect(f.runs.length, f.key).toBeGreaterThan(0);
      // a few corrections may fit in the file's free blocks: its growth can be 0, never less
      const least = f.key === 'history_growth_mib' ? 0 : Number.MIN_VALUE;
      for (const run of f.runs) expect(Number.isFinite(run) && run >= least, `${f.key} run ${run}`).toBe(true);
      expect(f.value, f.key).toBe(ss.median(f.runs));
      expect(f.verdict, f.key).toBe('no_goal'); // goals are set for small and large only
    }
    expect(result.missed).toEqual([]);
    const close = (actual: number, expected: number, what: string) =>
      expect(Math.abs(actual - expected), `${what}: ${actual} vs ${expected}`).toBeLessThanOrEqual(1e-9 * Math.abs(expected));
    const get = (key: (typeof FIGURE_KEYS)[number]) => measured.get(key)!;
    const details = (key: (typeof FIGURE_KEYS)[number], name: string) => get(key).details[name] as number;

    // ingest (one run at tiny): rows/s is the history's rows over the ingest time, and the
    // ratio is that time over plain read_csv's
    const historyRows = Object.values(result.scenario.historyRows).reduce((a, b) => a + b, 0);
    expect(details('ingest_rows_per_second', 'rows')).toBe(historyRows);
    close(get('ingest_rows_per_second').value! * details('ingest_vs_read_csv', 'ingest_seconds'), historyRows, 'rows/s x seconds');
    close(
      get('ingest_vs_read_csv').value!,
      details('ingest_vs_read_csv', 'ingest_seconds') / details('ingest_vs_read_csv', 'plain_read_csv_seconds'),
      'ingest / read_csv',
    );

    // backfill: one risk_daily row per portfolio, history date and estimate (each window, the EWMA and each shrunk window)
    const risk = result.scenario.config.risk!;
    const estimates = risk.windows!.length + 1 + (risk.shrunk?.windows?.length ?? 0);
    expect(get('backfill_seconds').details).toMatchObject({
      portfolios: result.scenario.portfolios,
      risk_rows: result.scenario.portfolios * result.scenario.historyDays * estimates,
      to: result.scenario.lastDate,
    });
    // and the loss tables fill: every VaR method on every portfolio and date (normal: each
    // estimate, copied from risk_daily; historical: each lookback, its figures null while
    // the history is shorter), and at the last date three stress scenarios and three worst windows
    const lookbacks = result.scenario.config.risk!.historical?.days?.length ?? 2;
    const portfolioDates = result.scenario.portfolios * result.scenario.historyDays;
    expect(get('backfill_seconds').details).toMatchObject({
      var_daily_normal_rows: portfolioDates * estimates,
      var_daily_historical_rows: portfolioDates * lookbacks,
      var_daily_filtered_historical_rows: portfolioDates * lookbacks,
      stress_results_historical_rows: result.scenario.portfolios * (1 + 3),
      stress_results_hypothetical_rows: result.scenario.portfolios * 2,
    });
    expect(details('backfill_seconds', 'var_backtest_normal_rows')).toBeGreaterThan(0);

    // new days: one timing per day; each day's time is the sum of its four phases, and
    // with two days a median is a mean, so the phase medians add up to the figure
    const latency = get('new_day_latency_seconds');
    expect(latency.runs).toHaveLength(result.scenario.newDays);
    const phases = ['wait_seconds', 'ingest_seconds', 'recompute_seconds', 'publish_seconds'].map((k) => latency.details[k] as number);
    close(phases.reduce((a, b) => a + b, 0), latency.value!, 'sum of the phases');
    expect(latency.details.committed_seconds as number).toBeLessThanOrEqual(latency.value!);

    // a Node process with DuckDB loaded holds well over 20 MiB (common practice, no source)
    if (measured.has('worker_peak_memory_mib')) expect(get('worker_peak_memory_mib').value).toBeGreaterThan(20);

    // the backfill's vol_ex_ante agrees with covariances rebuilt from scratch per window,
    // and the ratio is the naive time over the measured backfill's
    const naive = get('naive_vs_incremental');
    expect(naive.details.figures_compared as number).toBeGreaterThan(0);
    expect(naive.details.max_abs_difference as number).toBeLessThan(1e-9);
    expect(naive.details.incremental_seconds).toBe(get('backfill_seconds').value);
    close(naive.value!, (naive.details.naive_seconds as number) / (naive.details.incremental_seconds as number), 'naive / incremental');

    // the numpy comparison: riskfold's ingest and backfill, as measured above, over the script's time
    if (hasNumpy) {
      const numpy = get('riskfold_vs_numpy');
      expect(numpy.details).toMatchObject({
        riskfold_ingest_seconds: details('ingest_vs_read_csv', 'ingest_seconds'),
        riskfold_backfill_seconds: get('backfill_seconds').value,
      });
      expect(numpy.details.numpy_figures as number).toBeGreaterThan(0);
      close(numpy.value!, (details('ingest_vs_read_csv', 'ingest_seconds') + get('backfill_seconds').value!) / (numpy.details.numpy_seconds as number), 'riskfold / numpy');
    }

    // history: each correction of the latest date replaces every portfolio's rows of that
    // date, one per estimate, and they are kept
    const growth = get('history_growth_mib');
    expect(growth.details).toMatchObject({ corrections: 3, risk_daily_history_rows: 3 * result.scenario.portfolios * estimates });
    const grown = details('history_growth_mib', 'database_mib_after') - details('history_growth_mib', 'database_mib_before');
    close(growth.value!, grown, 'growth');

    expect(result.scenario).toMatchObject({ securities: 12, portfolios: 2, historyDays: 70, newDays: 2, firstDate: '2016-01-04' });
    expect(result.scenario.historyRows).toEqual({ securities: 12, fx: 140, prices: 840, positions: 980 });
    expect(Object.keys(result.machine).sort()).toEqual(['cores', 'cpuModel', 'date', 'duckdb', 'memoryGiB', 'node', 'os']);
    expect(result.machine.duckdb).toMatch(/^v\d+\.\d+/);
    expect(result.workDir).toBeNull();

    const written = JSON.parse(readFileSync(path.join(resultsDir, 'tiny-latest.json'), 'utf8'));
    expect(written).toEqual(JSON.parse(JSON.stringify(result)));

    const text = formatResult(result);
    for (const f of result.figures) expect(text).toContain(f.label);
    // a real worker and a few recomputes run; on a busy 2-core machine that takes a while
  }, 600_000);

  it('leaves out the stages --skip names, saying so in their figures, and still measures ingest and backfill', async () => {
    const { log } = memoryLogger('warn');
    const result = await runBench({ size: 'tiny', resultsDir: null, log, skip: new Set(['naive', 'numpy', 'history', 'worker'] as const) });
    const notes = Object.fromEntries(result.figures.filter((f) => f.verdict === 'unavailable').map((f) => [f.key, f.note]));
    expect(notes).toEqual({
      naive_vs_incremental: 'skipped (--skip naive)',
      riskfold_vs_numpy: 'skipped (--skip numpy)',
      history_growth_mib: 'skipped (--skip history)',
      new_day_latency_seconds: 'skipped (--skip worker)',
      worker_peak_memory_mib: 'skipped (--skip worker)',
    });
    for (const key of ['ingest_rows_per_second', 'ingest_vs_read_csv', 'backfill_seconds'] as const) {
      expect(result.figures.find((f) => f.key === key)!.value, key).toBeGreaterThan(0);
    }
  }, 300_000);
});
