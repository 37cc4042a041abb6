import type { Logger } from 'pino';
import { runRecompute, type RunSummary } from '../../src/batch/runRecompute.ts';
import { openWorkspace } from '../../src/storage/workspace.ts';
import { figure, type Figure } from '../figures.ts';
import type { SizeName } from '../scenario.ts';
import { median, phaseMedians, timed } from '../measure.ts';
import type { BenchWorkspace } from '../workspace.ts';

export interface BackfillMeasurement {
  figure: Figure;
  seconds: number[];
  /** Median seconds of the runs' compute phase (the estimates alone, no reading or writing). */
  computeSeconds: number | null;
}

/**
 * `recompute` with no `from` (every date, every portfolio), `runs` times on the same
 * ingested workspace. The first run fills empty tables, later ones replace the rows:
 * both are what a user's "recompute" does.
 */
export async function measureBackfill(ws: BenchWorkspace, size: SizeName, runs: number, log: Logger): Promise<BackfillMeasurement> {
  // opening brings the derived tables up to date with the freshly ingested raw tables:
  // not part of recompute, but real work after a history load, so it is reported too
  const { value: db, seconds: openSeconds } = await timed(() => openWorkspace(ws.config, log));
  const seconds: number[] = [];
  const summaries: RunSummary[] = [];
  try {
    for (let run = 0; run < runs; run++) {
      const out = await timed(() => runRecompute(db, ws.config, log, { trigger: 'bench:backfill', from: null, portfolios: null }));
      seconds.push(out.seconds);
      summaries.push(out.value);
    }
  } finally {
    db.close();
  }
  const summary = summaries.at(-1)!;
  const compute = summaries.map((r) => r.phases.compute).filter((s) => s !== undefined);
  return {
    seconds,
    computeSeconds: compute.length ? median(compute) : null,
    figure: figure('backfill_seconds', size, seconds, {
      note: `${summary.riskRows.toLocaleString('en-US')} risk rows over ${summary.portfolios} portfolios`,
      details: {
        risk_rows: summary.riskRows,
        portfolios: summary.portfolios,
        from: summary.from,
        to: summary.to,
        open_workspace_seconds: openSeconds,
        ...phaseMedians(summaries.map((r) => r.phases), 'phase'),
      },
    }),
  };
}
