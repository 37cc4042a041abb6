import type { Logger } from 'pino';
import { runRecompute, type RunSummary } from '../../src/batch/runRecompute.ts';
import type { Database } from '../../src/storage/database.ts';
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
 * ingested workspace, after one run without the shrunk window (what it costs goes in
 * the details). The runs replace the rows, as a user's "recompute" does.
 */
export async function measureBackfill(ws: BenchWorkspace, size: SizeName, runs: number, log: Logger): Promise<BackfillMeasurement> {
  // opening brings the derived tables up to date with the freshly ingested raw tables:
  // not part of recompute, but real work after a history load, so it is reported too
  const { value: db, seconds: openSeconds } = await timed(() => openWorkspace(ws.config, log));
  const seconds: number[] = [];
  const summaries: RunSummary[] = [];
  let shrunk: { seconds: number; compute: number | null };
  let lossRows: Record<string, number>;
  try {
    // first, so the measured runs leave the workspace as the later stages expect it
    shrunk = await withoutShrunk(db, ws, log);
    for (let run = 0; run < runs; run++) {
      const out = await timed(() => runRecompute(db, ws.config, log, { trigger: 'bench:backfill', from: null, portfolios: null }));
      seconds.push(out.seconds);
      summaries.push(out.value);
    }
    lossRows = await countLossRows(db);
  } finally {
    db.close();
  }
  const summary = summaries.at(-1)!;
  const compute = summaries.map((r) => r.phases.compute).filter((s) => s !== undefined);
  return {
    seconds,
    computeSeconds: compute.length ? median(compute) : null,
    figure: figure('backfill_seconds', size, seconds, {
      note: `${summary.riskRows.toLocaleString('en-US')} risk rows over ${summary.portfolios} portfolios; loss tables: ${Object.entries(lossRows)
        .map(([k, n]) => `${n.toLocaleString('en-US')} ${k.replace('_rows', '')}`)
        .join(', ')}`,
      details: {
        risk_rows: summary.riskRows,
        portfolios: summary.portfolios,
        ...lossRows,
        from: summary.from,
        to: summary.to,
        open_workspace_seconds: openSeconds,
        ...phaseMedians(summaries.map((r) => r.phases), 'phase'),
        without_shrunk_seconds: shrunk.seconds,
        // what the shrunk estimate adds to the risk compute, against one run without it
        shrunk_compute_seconds: compute.length && shrunk.compute !== null ? median(compute) - shrunk.compute : null,
      },
    }),
  };
}

/** One backfill with no shrunk window, for what the shrunk estimate costs. */
async function withoutShrunk(db: Database, ws: BenchWorkspace, log: Logger): Promise<{ seconds: number; compute: number | null }> {
  const config = { ...ws.config, risk: { ...ws.config.risk, shrunk: { windows: [] } } };
  const out = await timed(() => runRecompute(db, config, log, { trigger: 'bench:backfill-without-shrunk', from: null, portfolios: null }));
  return { seconds: out.seconds, compute: out.value.phases.compute ?? null };
}

/** Rows of the loss stage's tables by method or kind: that each one fills is part of the figure. */
async function countLossRows(db: Database): Promise<Record<string, number>> {
  const rows = await db.all<{ name: string; n: number }>(
    `select 'var_daily_' || method || '_rows' as name, count(*)::integer as n from var_daily group by method
     union all select 'var_backtest_' || method || '_rows', count(*)::integer from var_backtest group by method
     union all select 'stress_results_' || kind || '_rows', count(*)::integer from stress_results group by kind
     order by name`,
  );
  return Object.fromEntries(rows.map((r) => [r.name, r.n]));
}
