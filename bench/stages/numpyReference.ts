import { execFile, spawnSync } from 'node:child_process';
import path from 'node:path';
import { promisify } from 'node:util';
import type { Config } from '../../src/config/load.ts';
import { figure, type Figure } from '../figures.ts';
import type { GeneratedScenario } from '../generate.ts';
import { median, timed } from '../measure.ts';

const SCRIPT = path.join(import.meta.dirname, '..', 'numpy_reference.py');
/** The script's exit code when numpy cannot be imported. */
const NO_NUMPY = 3;

/** The Python the bench runs: $RISKFOLD_PYTHON, else python3 on the PATH. */
const PYTHON = process.env.RISKFOLD_PYTHON ?? 'python3';

/** Whether that Python can import numpy (the tests that need it skip otherwise). */
export function numpyAvailable(): boolean {
  return spawnSync(PYTHON, ['-c', 'import numpy'], { stdio: 'ignore' }).status === 0;
}

export interface NumpyRun {
  /** The whole process: interpreter, numpy import, reading, computing. */
  seconds: number;
  readSeconds: number;
  computeSeconds: number;
  figures: number;
}

/** The arguments that make bench/numpy_reference.py compute what `config` asks riskfold for, on `history`'s files. */
export function numpyReferenceArgs(history: GeneratedScenario['history'], config: Config, out?: string): string[] {
  const file = (kind: string) => {
    const found = history.find((f) => f.kind === kind);
    if (!found) throw new Error(`the scenario has no ${kind} file`);
    return found.path;
  };
  const args = [SCRIPT, '--prices', file('prices'), '--fx', file('fx'), '--positions', file('positions')];
  args.push('--base', config.baseCurrency, '--windows', config.risk.windows.join(','));
  args.push('--days-per-year', String(config.risk.tradingDaysPerYear), '--max-stale', String(config.risk.maxStaleDays));
  args.push('--lambda', String(config.risk.ewma.lambda), '--seed-days', String(config.risk.ewma.seedDays));
  return out ? [...args, '--out', out] : args;
}

/**
 * Runs bench/numpy_reference.py with python3 (or $RISKFOLD_PYTHON). Throws with a clear
 * message where Python or numpy is missing, which the harness reports as the figure's note.
 */
export async function runNumpyReference(args: string[]): Promise<NumpyRun> {
  try {
    const { value, seconds } = await timed(() => promisify(execFile)(PYTHON, args, { maxBuffer: 1 << 20 }));
    const out = JSON.parse(value.stdout) as { read_seconds: number; compute_seconds: number; figures: number };
    return { seconds, readSeconds: out.read_seconds, computeSeconds: out.compute_seconds, figures: out.figures };
  } catch (err) {
    // execFile's error: code is the errno name when the program did not start, else its exit code
    const e = err as Error & { code?: string | number; stderr?: string };
    if (e.code === 'ENOENT') throw new Error(`skipped: ${PYTHON} not found (set RISKFOLD_PYTHON to a Python 3 with numpy)`);
    if (e.code === NO_NUMPY) throw new Error(`skipped: numpy is not installed for ${PYTHON}`);
    throw new Error(`numpy_reference.py failed: ${e.stderr?.trim() || e.message}`);
  }
}

/**
 * riskfold's ingest plus full backfill of the history against the numpy script reading
 * the same CSVs and computing the sample and EWMA volatilities: the ratio is riskfold's
 * time over numpy's (under 1: riskfold is faster). Both figures come from this
 * invocation, on the same machine and load.
 */
export async function measureNumpyReference(
  scenario: GeneratedScenario,
  config: Config,
  riskfold: { ingestSeconds: number; backfillSeconds: number },
): Promise<Figure> {
  const runs: NumpyRun[] = [];
  for (let run = 0; run < scenario.size.runs; run++) runs.push(await runNumpyReference(numpyReferenceArgs(scenario.history, config)));
  const riskfoldSeconds = riskfold.ingestSeconds + riskfold.backfillSeconds;
  return figure(
    'riskfold_vs_numpy',
    scenario.size.name,
    runs.map((r) => riskfoldSeconds / r.seconds),
    {
      note: 'riskfold ingest + full backfill / bench/numpy_reference.py (reads the CSVs, sample and EWMA volatilities)',
      details: {
        numpy_seconds: median(runs.map((r) => r.seconds)),
        numpy_read_seconds: median(runs.map((r) => r.readSeconds)),
        numpy_compute_seconds: median(runs.map((r) => r.computeSeconds)),
        numpy_figures: runs[0].figures,
        riskfold_ingest_seconds: riskfold.ingestSeconds,
        riskfold_backfill_seconds: riskfold.backfillSeconds,
      },
    },
  );
}
