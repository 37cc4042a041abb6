import path from 'node:path';
import { parseArgs } from 'node:util';
import { createLogger } from '../src/log/logger.ts';
import { formatNumber } from './figures.ts';
import { runBench } from './harness.ts';
import { formatResult } from './report.ts';
import { SIZE_NAMES, type SizeName } from './scenario.ts';

/**
 * `npm run bench [-- --size small|medium|large] [--runs N] [--keep]`: prints the figures and writes
 * bench/results/<size>-latest.json. A missed goal is reported, never an exit code, so
 * CI can run the small size without failing on a slow machine.
 */
const { values } = parseArgs({
  options: {
    size: { type: 'string', default: 'small' },
    runs: { type: 'string' },
    keep: { type: 'boolean', default: false },
  },
});
if (!(SIZE_NAMES as readonly string[]).includes(values.size)) {
  process.stderr.write(`bench: --size must be one of ${SIZE_NAMES.join(', ')}, got "${values.size}"\n`);
  process.exit(2);
}
const runs = values.runs === undefined ? undefined : Number(values.runs);
if (runs !== undefined && !(Number.isInteger(runs) && runs >= 1)) {
  process.stderr.write(`bench: --runs must be a whole number >= 1, got "${values.runs}"\n`);
  process.exit(2);
}

// warnings only: the stages log every file and run at info, which would bury the table
const log = createLogger({ level: process.env.RISKFOLD_LOG_LEVEL ?? 'warn' });
const result = await runBench({
  size: values.size as SizeName,
  // tiny is a smoke run of the harness, not a figure worth keeping
  resultsDir: values.size === 'tiny' ? null : path.join(import.meta.dirname, 'results'),
  log,
  runs,
  keep: values.keep,
  onStage: (name) => process.stderr.write(`bench: ${name}\n`),
  onFigure: (f) => process.stderr.write(`bench:   ${f.label}: ${f.value === null ? f.note : `${formatNumber(f.value)} ${f.unit}`}\n`),
});
process.stdout.write(formatResult(result));
if (result.workDir) process.stdout.write(`kept the scenario and workspaces in ${result.workDir}\n`);
