import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import * as ss from 'simple-statistics';
import { afterEach, describe, expect, it } from 'vitest';
import { FIGURE_KEYS, figure, unavailable } from '../../bench/figures.ts';
import { runBench } from '../../bench/harness.ts';
import { median, peakResidentBytes } from '../../bench/measure.ts';
import { formatResult } from '../../bench/report.ts';
import { memoryLogger } from '../../src/log/logger.ts';

// Timings are never asserted: CI machines differ. These tests check the shape of what
// the harness reports and the arithmetic of its verdicts.

describe('figure', () => {
  it('takes the median of its runs, as simple-statistics median does', () => {
    const runs = [4.2, 1.5, 9.9, 3.3];
    expect(figure('backfill_seconds', 'large', runs).value).toBe(ss.median(runs));
    expect(median([3, 1, 2])).toBe(ss.median([3, 1, 2]));
  });

  it('judges a "max" goal and says by how much it was missed', () => {
    const slow = figure('backfill_seconds', 'large', [72]);
    expect(slow.verdict).toBe('missed');
    expect(slow.shortfall).toBe('20% over: 12 s above the goal of 60 s');
    expect(figure('backfill_seconds', 'large', [59]).verdict).toBe('met');
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

  it('reports every figure in order, measured or with a reason, writes the same JSON and removes its workspace', async () => {
    const resultsDir = mkdtempSync(path.join(tmpdir(), 'riskfold-bench-results-'));
    dirs.push(resultsDir);
    const { log } = memoryLogger('warn');
    const result = await runBench({ size: 'tiny', resultsDir, log });

    expect(result.figures.map((f) => f.key)).toEqual([...FIGURE_KEYS]);
    for (const f of result.figures) {
      if (f.verdict === 'unavailable') {
        expect(f.value, f.key).toBeNull();
        expect(f.note, f.key).toMatch(/\S/);
      } else {
        expect(Number.isFinite(f.value), f.key).toBe(true);
        expect(f.value!, f.key).toBeGreaterThan(0);
        expect(f.runs.length, f.key).toBeGreaterThan(0);
      }
    }
    expect(result.scenario).toMatchObject({ securities: 12, portfolios: 2, historyDays: 70, firstDate: '2016-01-04' });
    expect(result.scenario.historyRows).toEqual({ securities: 12, fx: 140, prices: 840, positions: 980 });
    expect(Object.keys(result.machine).sort()).toEqual(['cores', 'cpuModel', 'date', 'duckdb', 'memoryGiB', 'node', 'os']);
    expect(result.machine.duckdb).toMatch(/^v\d+\.\d+/);
    expect(result.workDir).toBeNull();

    const written = JSON.parse(readFileSync(path.join(resultsDir, 'tiny-latest.json'), 'utf8'));
    expect(written).toEqual(JSON.parse(JSON.stringify(result)));

    // the backfill's vol_ex_ante agrees with covariances rebuilt from scratch per window
    const naive = result.figures.find((f) => f.key === 'naive_vs_incremental')!;
    if (naive.verdict !== 'unavailable') {
      expect(naive.details.figures_compared).toBeGreaterThan(0);
      expect(naive.details.max_abs_difference).toBeLessThan(1e-9);
    }

    const text = formatResult(result);
    for (const f of result.figures) expect(text).toContain(f.label);
    // a real worker and a few recomputes run; on a busy 2-core machine that takes a while
  }, 600_000);
});
