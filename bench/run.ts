import path from 'node:path';
import { parseArgs } from 'node:util';
import { createLogger } from '../src/log/logger.ts';
import { formatNumber } from './figures.ts';
import { runBench, SKIPPABLE_STAGES, type SkippableStage } from './harness.ts';
import { formatResult } from './report.ts';
import { SIZE_NAMES, SIZES, type SizeName } from './scenario.ts';
import { formatSweep, GROWTH_YEARS, growthPoints, runSweep, scalingBase, scalingPoints, type SweepOptions } from './sweeps.ts';

/**
 * `npm run bench [-- --size small|medium|large] [--runs N] [--keep] [--skip naive,numpy,history,worker]`: prints the figures and writes
 * bench/results/<size>-latest.json. A missed goal is reported, never an exit code, so
 * CI can run the small size without failing on a slow machine.
 * `--growth [--years 3,6,10]`: the size's book over histories of those lengths (new day,
 * backfill, a correction three years back); `--scaling [--full-grid]`: the same figures
 * as portfolios, holdings and years grow (sweeps.ts). Each writes bench/results/<mode>-latest.json.
 */
const { values } = parseArgs({
  options: {
    size: { type: 'string', default: 'small' },
    runs: { type: 'string' },
    keep: { type: 'boolean', default: false },
    growth: { type: 'boolean', default: false },
    years: { type: 'string' },
    scaling: { type: 'boolean', default: false },
    'full-grid': { type: 'boolean', default: false },
    skip: { type: 'string' },
  },
});
if (!(SIZE_NAMES as readonly string[]).includes(values.size)) {
  process.stderr.write(`bench: --size must be one of ${SIZE_NAMES.join(', ')}, got "${values.size}"\n`);
  process.exit(2);
}
const skip = values.skip === undefined ? [] : values.skip.split(',');
const unknownStage = skip.find((s) => !(SKIPPABLE_STAGES as readonly string[]).includes(s));
if (unknownStage !== undefined) {
  process.stderr.write(`bench: --skip takes ${SKIPPABLE_STAGES.join(', ')} (comma-separated), got "${unknownStage}"\n`);
  process.exit(2);
}
const runs = values.runs === undefined ? undefined : Number(values.runs);
if (runs !== undefined && !(Number.isInteger(runs) && runs >= 1)) {
  process.stderr.write(`bench: --runs must be a whole number >= 1, got "${values.runs}"\n`);
  process.exit(2);
}

// warnings only: the stages log every file and run at info, which would bury the table
const log = createLogger({ level: process.env.RISKFOLD_LOG_LEVEL ?? 'warn' });
const resultsDir = path.join(import.meta.dirname, 'results');

if (values.growth || values.scaling) {
  const size = values.size as SizeName;
  const years = values.years === undefined ? GROWTH_YEARS : values.years.split(',').map(Number);
  if (!years.every((y) => Number.isInteger(y) && y >= 1)) {
    process.stderr.write(`bench: --years must be whole numbers >= 1 separated by commas, got "${values.years}"\n`);
    process.exit(2);
  }
  const sweep: Omit<SweepOptions, 'resultsDir' | 'log'> = values.growth
    ? {
        name: `growth-${size}`,
        about: `the ${size} book (${SIZES[size].portfolios} portfolios x ${SIZES[size].holdingsPerPortfolio} holdings) over ${years.join(', ')} years of history`,
        base: SIZES[size],
        points: growthPoints(size, years),
      }
    : {
        name: 'scaling',
        about: values['full-grid']
          ? 'full grid: portfolios 10/50/200 x holdings 50/200/500 x years 3/10'
          : 'reduced grid (the full one, --full-grid, takes hours): portfolios 10/50/200, holdings 50/200/500 and years 3/10, one at a time around 10 x 50 over 3 years',
        base: scalingBase(),
        points: scalingPoints(values['full-grid']),
      };
  const result = await runSweep({
    ...sweep,
    // tiny is a smoke run, as below
    resultsDir: values.growth && size === 'tiny' ? null : resultsDir,
    log,
    onPoint: (p, cost) =>
      process.stderr.write(
        `bench: ${p.portfolios} portfolios x ${p.holdingsPerPortfolio} holdings, ${p.years} years: backfill ${formatNumber(cost.backfillSeconds)} s, new day ${formatNumber(cost.newDaySeconds)} s\n`,
      ),
  });
  process.stdout.write(formatSweep(result));
  process.exit(0);
}
const result = await runBench({
  size: values.size as SizeName,
  // tiny is a smoke run of the harness, not a figure worth keeping
  resultsDir: values.size === 'tiny' ? null : resultsDir,
  log,
  runs,
  keep: values.keep,
  skip: new Set(skip as SkippableStage[]),
  onStage: (name) => process.stderr.write(`bench: ${name}\n`),
  onFigure: (f) => process.stderr.write(`bench:   ${f.label}: ${f.value === null ? f.note : `${formatNumber(f.value)} ${f.unit}`}\n`),
});
process.stdout.write(formatResult(result));
if (result.workDir) process.stdout.write(`kept the scenario and workspaces in ${result.workDir}\n`);
