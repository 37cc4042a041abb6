import { existsSync } from 'node:fs';
import path from 'node:path';
import type { Logger } from 'pino';
import { deliverAlerts, type DeliverySummary } from '../alerts/deliverAlerts.ts';
import type { Config } from '../config/load.ts';
import { orderDeliveries } from '../ingest/deliveryOrder.ts';
import { ingestFile, type IngestOutcome } from '../ingest/ingestFile.ts';
import type { Database } from '../storage/database.ts';
import { publishReadCopy } from '../storage/readCopy.ts';
import { nothingToCompute } from './nothingToCompute.ts';
import { markInterruptedRuns } from './runRecord.ts';
import { mergeScope, triggerFor, uncoveredFiles, type RecomputeScope } from './recomputeScope.ts';
import { runRecompute, type RecomputeRequest, type RunSummary } from './runRecompute.ts';
import { changedSettings, describeChange, resultSettings, type SettingChange } from './runSettings.ts';

export interface BatchOptions {
  /**
   * Deliver alerts before publishing (the `ingest` command). The worker passes false and
   * delivers from its own loop, so a slow webhook never holds up the next file.
   */
  deliver?: boolean;
  /**
   * Called once the batch's run is committed (or has failed, or there was none), before
   * the read copy is published: the worker kicks its alert delivery there, so an alert
   * does not wait for the copy of the database.
   */
  onCommitted?: () => void;
  /** Checked before each file: once true, the remaining files stay in the inbox for the next start. */
  shouldStop?: () => boolean;
  /** Called after each file's transaction, for progress output. */
  onFile?: (outcome: IngestOutcome) => void;
  /**
   * Recompute exactly this instead of what the files touched (the `recompute` command,
   * usually with no files). Files the run does not reach stay uncovered for the next batch.
   */
  recompute?: RecomputeRequest;
}

export interface BatchSummary {
  files: IngestOutcome[];
  /** Files not processed: gone from the inbox before their turn, or left for the next start after a stop. */
  skipped: string[];
  scope: RecomputeScope | null;
  /** Settings that differ from those the stored results were made with: the run was widened to the full history. */
  settingChanges: SettingChange[];
  run: RunSummary | null;
  /** The recompute failed; its files stay uncovered and the next batch or start retries them. */
  runError: string | null;
  /** Why no run was made although files were loaded (nothing to compute), in plain words. */
  idle: string | null;
  delivery: DeliverySummary | null;
  /** Why the read copy was not published (the disk too full), in one line; null when it was. */
  readCopyBehind: string | null;
  /** Wall-clock seconds of the batch's steps: where a day's time goes. */
  seconds: { ingest: number; run: number; deliver: number; publish: number };
}

/**
 * The one home of a batch, for `watch`, `ingest`, `recompute` and the demo: each file in
 * its own ingest transaction (securities, fx, prices, then positions; by arrival within
 * a kind), then ONE run over everything they
 * touched (runRecompute: derived refresh, risk, then one transaction for risk rows,
 * estimator state, limits and the outbox), then, after the commit, alert delivery
 * (optional) and the read copy.
 */
export async function runBatch(
  db: Database,
  config: Config,
  log: Logger,
  files: string[],
  options: BatchOptions = {},
): Promise<BatchSummary> {
  const blog = log.child({ stage: 'batch' });
  const summary: BatchSummary = {
    files: [],
    skipped: [],
    scope: null,
    settingChanges: [],
    run: null,
    runError: null,
    idle: null,
    delivery: null,
    readCopyBehind: null,
    seconds: { ingest: 0, run: 0, deliver: 0, publish: 0 },
  };
  let stepStarted = performance.now();
  const endStep = (step: keyof BatchSummary['seconds']) => {
    const now = performance.now();
    summary.seconds[step] = (now - stepStarted) / 1000;
    stepStarted = now;
  };

  const interrupted = await markInterruptedRuns(db);
  if (interrupted.length > 0) blog.warn({ runIds: interrupted }, `run ${interrupted.join(', ')} marked interrupted: the process ended during it`);

  for (const file of orderDeliveries(config, files)) {
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
  endStep('ingest');

  summary.scope = mergeScope(summary.files, await uncoveredFiles(db));
  summary.idle = summary.scope && !options.recompute ? await nothingToCompute(db, summary.scope) : null;
  if (summary.idle) blog.info({ files: summary.scope?.files }, summary.idle);
  let request = summary.idle ? null : (options.recompute ?? requestFor(summary));
  // stored results made under other settings would mix with new rows: recompute them all
  summary.settingChanges = await changedSettings(db, resultSettings(config));
  for (const change of summary.settingChanges) blog.warn({ ...change }, describeChange(change));
  if (summary.settingChanges.length > 0) request = { trigger: request?.trigger ?? 'settings', from: null, portfolios: null };
  if (request) {
    try {
      summary.run = await runRecompute(db, config, log, request);
    } catch (err) {
      summary.runError = err instanceof Error ? err.message : String(err);
      blog.error({ err, trigger: request.trigger }, 'recompute failed; its files are retried with the next batch');
    }
  }

  endStep('run');
  options.onCommitted?.();
  if (options.deliver ?? true) summary.delivery = await deliverAlerts(db, config, log);
  endStep('deliver');
  const published = await publishReadCopy(db, config, log);
  endStep('publish');
  if (!published.published) {
    summary.readCopyBehind = published.reason;
    blog.warn({ kind: 'disk_full', readCopy: config.readCopy }, published.reason);
  }
  blog.info(
    {
      files: summary.files.map((f) => ({ name: f.name, status: f.status, rows: f.rows })),
      skipped: summary.skipped.length,
      runId: summary.run?.runId ?? null,
      runError: summary.runError,
      idle: summary.idle,
      readCopyBehind: summary.readCopyBehind,
      seconds: summary.seconds,
    },
    'batch done',
  );
  return summary;
}

/** The run that covers the batch's files and any left uncovered before; null when there are none. */
function requestFor(summary: BatchSummary): RecomputeRequest | null {
  if (!summary.scope) return null;
  const trigger = triggerFor(summary.scope, summary.files.some((f) => f.status === 'ingested') ? 'ingest' : 'resume');
  return { trigger, from: summary.scope.from, portfolios: summary.scope.portfolios };
}
