import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import type { Logger } from 'pino';
import { toTable } from '../src/cli/format.ts';
import { formatNumber } from './figures.ts';
import { generateScenario } from './generate.ts';
import { machineInfo, type MachineInfo } from './measure.ts';
import { SIZES, YEAR, type ScenarioSize, type SizeName } from './scenario.ts';
import { measureDayCost, type DayCost } from './stages/dayCost.ts';

/**
 * The bench's sweeps: the same measurement (stages/dayCost.ts: backfill, new days, a
 * correction three years back) over several scenarios, printed as one table and written
 * to bench/results/<name>-latest.json.
 *  - growth: one book (a size's securities, portfolios and holdings), only the length of
 *    history differs; a day's cost should not grow with it.
 *  - scaling: portfolios, holdings and years varied, one at a time around a small base
 *    point (the reduced grid) or every combination (the full grid).
 */

export interface SweepPoint {
  portfolios: number;
  holdingsPerPortfolio: number;
  years: number;
}

export interface SweepResult {
  name: string;
  /** What the points vary and why this set of them, for the printed header. */
  about: string;
  machine: MachineInfo;
  securities: number;
  rows: (SweepPoint & DayCost)[];
  totalSeconds: number;
}

export const GROWTH_YEARS = [3, 6, 10];
const GRID = { portfolios: [10, 50, 200], holdings: [50, 200, 500], years: [3, 10] };
// the reduced grid varies one axis at a time around this point: every combination of
// the full grid (up to 200 portfolios of 500 holdings over ten years, 261 million
// position rows) takes hours and more memory than a shared two-core machine has
const BASE_POINT: SweepPoint = { portfolios: 10, holdingsPerPortfolio: 50, years: 3 };
const SWEEP_SECURITIES = 1000;
const SWEEP_NEW_DAYS = 3;

export function growthPoints(size: SizeName, years: readonly number[]): SweepPoint[] {
  const { portfolios, holdingsPerPortfolio } = SIZES[size];
  return years.map((y) => ({ portfolios, holdingsPerPortfolio, years: y }));
}

export function scalingPoints(full: boolean): SweepPoint[] {
  if (full) {
    return GRID.portfolios.flatMap((portfolios) =>
      GRID.holdings.flatMap((holdingsPerPortfolio) => GRID.years.map((years) => ({ portfolios, holdingsPerPortfolio, years }))),
    );
  }
  const points: SweepPoint[] = [
    ...GRID.portfolios.map((portfolios) => ({ ...BASE_POINT, portfolios })),
    ...GRID.holdings.map((holdingsPerPortfolio) => ({ ...BASE_POINT, holdingsPerPortfolio })),
    ...GRID.years.map((years) => ({ ...BASE_POINT, years })),
  ];
  const seen = new Set<string>();
  return points.filter((p) => !seen.has(pointKey(p)) && seen.add(pointKey(p)));
}

export interface SweepOptions {
  name: string;
  about: string;
  /** The size whose securities and windows every point uses. */
  base: ScenarioSize;
  points: SweepPoint[];
  resultsDir: string | null;
  log: Logger;
  onPoint?: (point: SweepPoint, cost: DayCost) => void;
}

/** Measures every point in turn (each on its own generated scenario, removed after). */
export async function runSweep(options: SweepOptions): Promise<SweepResult> {
  const started = performance.now();
  const root = mkdtempSync(path.join(os.tmpdir(), `riskfold-bench-${options.name}-`));
  const rows: SweepResult['rows'] = [];
  try {
    for (const point of options.points) {
      const size: ScenarioSize = {
        ...options.base,
        portfolios: point.portfolios,
        holdingsPerPortfolio: point.holdingsPerPortfolio,
        historyDays: point.years * YEAR,
        newDays: SWEEP_NEW_DAYS,
        runs: 1,
      };
      const dir = path.join(root, pointKey(point));
      const scenario = await generateScenario(size, dir);
      const cost = await measureDayCost(scenario, dir, 'workspace', options.log);
      rmSync(dir, { recursive: true, force: true });
      rows.push({ ...point, ...cost });
      options.onPoint?.(point, cost);
    }
  } finally {
    rmSync(root, { recursive: true, force: true });
  }
  const result: SweepResult = {
    name: options.name,
    about: options.about,
    machine: await machineInfo(),
    securities: options.base.securities,
    rows,
    totalSeconds: (performance.now() - started) / 1000,
  };
  if (options.resultsDir) {
    mkdirSync(options.resultsDir, { recursive: true });
    writeFileSync(path.join(options.resultsDir, `${options.name}-latest.json`), `${JSON.stringify(result, null, 2)}\n`);
  }
  return result;
}

/** The base size for a scaling sweep: the large size's securities and windows. */
export function scalingBase(): ScenarioSize {
  return { ...SIZES.large, securities: SWEEP_SECURITIES };
}

/** The printed table: one row per point, then where a day's time went at each. */
export function formatSweep(result: SweepResult): string {
  const m = result.machine;
  const table = toTable({
    columns: ['portfolios', 'holdings', 'years', 'ingest s', 'backfill s', 'new day s', 'correction 3y back s', 'correction from'],
    rows: result.rows.map((r) => [
      r.portfolios,
      r.holdingsPerPortfolio,
      r.years,
      formatNumber(r.ingestSeconds),
      formatNumber(r.backfillSeconds),
      formatNumber(r.newDaySeconds),
      r.correction ? formatNumber(r.correction.seconds) : 'n/a',
      r.correction?.from ?? '',
    ]),
  });
  const out = [
    `riskfold bench ${result.name}: ${result.about}; ${result.securities} securities`,
    `machine: ${m.cpuModel}, ${m.cores} cores, ${m.memoryGiB} GiB, ${m.os}, node ${m.node}, duckdb ${m.duckdb}, ${m.date}`,
    'new day: median of one batch per day (ingest of its files, the run, the read-copy publish), in process: no stable-file wait or arrival window',
    '',
    // toTable ends with a row count, which says nothing here
    ...table.trimEnd().split('\n').slice(0, -1),
    '',
  ];
  for (const r of result.rows) {
    const phases = Object.entries(r.newDayPhases)
      .filter(([, v]) => v >= 0.005)
      .map(([k, v]) => `${k.replace(/^day_|_seconds$/g, '')} ${formatNumber(v)}`)
      .join(', ');
    out.push(`${pointKey(r)}: new day ${phases}`);
  }
  out.push(`total ${formatNumber(result.totalSeconds)} s`);
  return `${out.join('\n')}\n`;
}

function pointKey(p: SweepPoint): string {
  return `p${p.portfolios}-h${p.holdingsPerPortfolio}-y${p.years}`;
}
