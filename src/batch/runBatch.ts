import { existsSync } from 'node:fs';
import path from 'node:path';
import type { Logger } from 'pino';
import { deliverAlerts, type DeliverySummary } from '../alerts/deliverAlerts.ts';
import type { Config } from '../config/load.ts';
import { ingestFile, type IngestOutcome } from '../ingest/ingestFile.ts';
import { recompute, type RunSummary } from '../risk/recompute.ts';
import type { Database } from '../storage/database.ts';
import { publishReadCopy } from '../storage/workspace.ts';
import { mergeScope, triggerFor, uncoveredFiles, type RecomputeScope } from './recomputeScope.ts';

export interface BatchOptions {
  /**
   * Deliver alerts before publishing (the `ingest` command). The worker passes false and
   * delivers from its own loop, so a slow webhook never holds up the next file.
   */
  deliver?: boolean;
  /** Checked before each file: once true, the remaining files stay in the inbox for the next start. */
  shouldStop?: () => boolean;
  /** Called after each file's transaction, for progress output. */
  onFile?: (outcome: IngestOutcome) => void;
}

export interface BatchSummary {
  files: IngestOutcome[];
  /** Files not processed: gone from the inbox before their turn, or left for the next start after a stop. */
  skipped: string[];
  scope: RecomputeScope | null;
  run: RunSummary | null;
  /** The recompute failed; its files stay uncovered and the next batch or start retries them. */
  runError: string | null;
  delivery: DeliverySummary | null;
}

/**
 * One unit of the worker's queue: each file in its own ingest transaction (in the order
 * given), then ONE recompute over everything they touched, which checks limits inside
 * its transaction, then alert delivery (optional) and the read copy.
 */
export async function runBatch(
  db: Database,
  config: Config,
  log: Logger,
  files: string[],
  options: BatchOptions = {},
): Promise<BatchSummary> {
  const blog = log.child({ stage: 'pipeline' });
  const summary: BatchSummary = { files: [], skipped: [], scope: null, run: null, runError: null, delivery: null };

  for (const file of files) {
    if (options.shouldStop?.()) {
      summary.skipped.push(file);
      continue;
    }
    // a file named twice (catch-up listing and a watcher event) is gone after its first turn
    if (!existsSync(file)) {
      blog.debug({ file }, 'file no longer in the inbox, skipped');
      summary.skipped.push(file);
      continue;
    }
    blog.info({ file: path.basename(file) }, 'ingesting file');
    const outcome = await ingestFile(db, config, log, file);
    summary.files.push(outcome);
    options.onFile?.(outcome);
  }

  summary.scope = mergeScope(summary.files, await uncoveredFiles(db));
  if (summary.scope) {
    const trigger = triggerFor(summary.scope, summary.files.some((f) => f.status === 'ingested') ? 'ingest' : 'resume');
    try {
      summary.run = await recompute(db, config, log, { trigger, from: summary.scope.from, portfolios: summary.scope.portfolios });
    } catch (err) {
      summary.runError = err instanceof Error ? err.message : String(err);
      blog.error({ err, trigger }, 'recompute failed; its files are retried with the next batch');
    }
  }

  if (options.deliver ?? true) summary.delivery = await deliverAlerts(db, config, log);
  await publishReadCopy(db, config, log);
  blog.info(
    {
      files: summary.files.map((f) => ({ name: f.name, status: f.status, rows: f.rows })),
      skipped: summary.skipped.length,
      runId: summary.run?.runId ?? null,
      runError: summary.runError,
    },
    'batch done',
  );
  return summary;
}
