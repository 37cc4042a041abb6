import { writeFileSync } from 'node:fs';
import path from 'node:path';
import type { Logger } from 'pino';
import { runBatch, type BatchSummary } from '../../src/batch/runBatch.ts';
import { runRecompute } from '../../src/batch/runRecompute.ts';
import type { Database } from '../../src/storage/database.ts';
import { openWorkspace } from '../../src/storage/workspace.ts';
import type { GeneratedScenario } from '../generate.ts';
import { median, phaseMedians, timed } from '../measure.ts';
import { createBenchWorkspace, dropIntoInbox, type BenchWorkspace } from '../workspace.ts';
import { ingestHistory } from './ingest.ts';

/** Business days in three years, as the scenario counts them (no holidays). */
const THREE_YEARS = 3 * 261;

export interface DayCost {
  /** Ingest of the history files, all kinds. */
  ingestSeconds: number;
  /** One full backfill (`recompute` with no from). */
  backfillSeconds: number;
  /** Median over the new days of one batch: ingest of the day's files, the run, the read-copy publish. */
  newDaySeconds: number;
  /** Per phase of those batches (ingest, the run's own phases, publish), medians. */
  newDayPhases: Record<string, number>;
  /** A price three years before the last date corrected: its batch, and the date its run started from. */
  correction: { seconds: number; from: string | null; phases: Record<string, number> } | null;
}

/**
 * What a day costs on one history, in process (no watcher: the stable-file wait and the
 * arrival window are the worker figure's): the history ingested and backfilled once,
 * then each new day's files as one batch (runBatch, as the worker runs it), then one
 * correction of a price three years back. Used by the growth and scaling modes, which
 * compare these figures across histories.
 */
export async function measureDayCost(scenario: GeneratedScenario, root: string, name: string, log: Logger): Promise<DayCost> {
  const ws = createBenchWorkspace(root, name, scenario.size);
  try {
    const ingest = await ingestHistory(scenario, ws, log);
    const db = await openWorkspace(ws.config, log);
    try {
      const backfill = await timed(() => runRecompute(db, ws.config, log, { trigger: 'bench:backfill', from: null, portfolios: null }));
      const days: BatchSummary[] = [];
      const seconds: number[] = [];
      for (const day of scenario.newDays) {
        const files = day.files.map((f) => dropIntoInbox(f.path, ws.config.inbox));
        const out = await timed(() => runBatch(db, ws.config, log, files, { deliver: false }));
        seconds.push(out.seconds);
        days.push(requireRun(out.value, day.date));
      }
      return {
        ingestSeconds: Object.values(ingest).reduce((a, b) => a + b, 0),
        backfillSeconds: backfill.seconds,
        newDaySeconds: median(seconds),
        newDayPhases: phaseMedians(days.map(batchPhases), 'day'),
        correction: await measureCorrection(db, ws, scenario, log),
      };
    } finally {
      db.close();
    }
  } finally {
    ws.remove();
  }
}

/**
 * One price of the date three years before the last one re-delivered with a small
 * change: the run must start from that date (and no earlier). Null when the history is
 * shorter than that.
 */
async function measureCorrection(db: Database, ws: BenchWorkspace, scenario: GeneratedScenario, log: Logger): Promise<DayCost['correction']> {
  const dates = [...scenario.historyDates, ...scenario.newDays.map((d) => d.date)];
  if (dates.length <= THREE_YEARS) return null;
  const date = dates[dates.length - 1 - THREE_YEARS];
  const [row] = await db.all<{ security_id: string; price: number }>(
    `select security_id, price from clean_prices where date = $1::date order by security_id limit 1`,
    [date],
  );
  if (!row) throw new Error(`correction: no price on ${date}`);
  const file = path.join(ws.config.inbox, `prices_correction_${date.replaceAll('-', '')}.csv`);
  writeFileSync(file, `date,security_id,price\n${date},${row.security_id},${row.price * 1.001}\n`);
  const out = await timed(() => runBatch(db, ws.config, log, [file], { deliver: false }));
  const summary = requireRun(out.value, date);
  return { seconds: out.seconds, from: summary.run!.from, phases: batchPhases(summary) };
}

function requireRun(summary: BatchSummary, what: string): BatchSummary {
  const failed = summary.files.find((f) => f.status !== 'ingested');
  if (failed) throw new Error(`${what}: ${failed.name} was ${failed.status}`);
  if (!summary.run) throw new Error(`${what}: no run (${summary.runError ?? summary.idle ?? 'no reason given'})`);
  return summary;
}

/** The run's phases and, around them, the batch's ingest and publish, from the summary's timings. */
function batchPhases(summary: BatchSummary): Record<string, number> {
  return { ingest: summary.seconds.ingest, ...summary.run!.phases, publish: summary.seconds.publish };
}
