import path from 'node:path';
import type { FSWatcher } from 'chokidar';
import type { Logger } from 'pino';
import { deliverAlerts } from '../alerts/deliverAlerts.ts';
import { rearmAlerts } from '../alerts/rearm.ts';
import { watchRetryRequests } from '../alerts/retryRequests.ts';
import type { Config } from '../config/load.ts';
import { RiskfoldError } from '../errors.ts';
import { runBatch } from '../batch/runBatch.ts';
import { companionSuffixes } from '../ingest/completeness.ts';
import { releaseVanished } from '../ingest/holds.ts';
import { recoverAtStart } from '../ingest/recovery.ts';
import type { Database } from '../storage/database.ts';
import { publishReadCopy, type PublishOutcome } from '../storage/readCopy.ts';
import { openWorkspace } from '../storage/workspace.ts';
import { ArrivalWindow } from '../watch/arrivalWindow.ts';
import { DeliveryLoop } from './deliveryLoop.ts';
import { holdsWholeDay, listInbox, waitUntilStable } from '../watch/inboxFiles.ts';
import { watchInbox } from '../watch/inboxWatcher.ts';
import { describeHolder, removePidFile, writePidFile } from './workerPidFile.ts';
import { WorkQueue } from './workQueue.ts';
import { hasOutsideChannel } from '../alerts/channels.ts';

/** What the scheduled jobs (src/schedule/) get from the worker that runs them. */
export interface ScheduleHost {
  config: Config;
  log: Logger;
  /** Runs fn between batches, the only time `db` may be used. */
  exclusive<T>(fn: (db: Database) => Promise<T>): Promise<T>;
  /** Asks for a delivery round now (retry of undelivered alerts). */
  deliverNow(): void;
  /** The database changed outside a batch (an audit's findings): publish the read copy. */
  republish(): void;
}
export type StartSchedules = (host: ScheduleHost) => { stop(): void | Promise<void> };

export interface WorkerOptions {
  /** The scheduled jobs; absent in tests that only exercise the file path. */
  startSchedules?: StartSchedules;
}

export interface Worker {
  /** Stops taking files, lets the current batch finish, closes everything. Safe to call twice. */
  stop(): Promise<void>;
  /** Resolves once stopped; rejects if the worker hit a fault it cannot go on after. */
  readonly done: Promise<void>;
  /** Resolves when no batch runs and no file waits (tests). */
  idle(): Promise<void>;
}

/**
 * The worker: owns the database (one per file, DuckDB's lock enforces it), catches up on
 * the inbox, then watches it. Each batch commits file by file, recomputes once, publishes
 * the read copy; alerts go out from a loop beside it.
 */
export async function startWorker(config: Config, log: Logger, options: WorkerOptions = {}): Promise<Worker> {
  const wlog = log.child({ stage: 'worker' });
  const db = await openOwned(config, log);
  writePidFile(config);
  if (!hasOutsideChannel(config)) {
    wlog.warn('no alert channel is configured: alerts go to this log only; set alerts.file or alerts.webhook so operations receive them');
  }

  let stopping = false;
  let publishWanted = false;
  let fault: unknown = null;
  let resolveDone!: () => void;
  let rejectDone!: (err: unknown) => void;
  const done = new Promise<void>((resolve, reject) => {
    resolveDone = resolve;
    rejectDone = reject;
  });
  // a fault is reported through `done` to whoever awaits it, never as an unhandled rejection
  done.catch(() => undefined);

  const handleBatch = async (files: string[]) => {
    try {
      // the alerts go out as soon as the run is committed, while the read copy is published
      const summary = await runBatch(db, config, log, files, { deliver: false, onCommitted: () => delivery.kick(), shouldStop: () => stopping });
      // a copy the disk had no room for is tried again by the next batch or publish; a
      // want raised meanwhile (the delivery's, which may have missed this batch's copy) stands
      if (summary.readCopyBehind !== null) {
        publishWanted = true;
        retryPublishLater();
      }
    } catch (err) {
      // a fault of the machine (disk, database): stop cleanly, the supervisor restarts us
      // and the catch-up takes the files still in the inbox
      wlog.fatal({ err }, 'batch failed; stopping the worker');
      fault = err;
      void stop();
    }
  };
  const queue = new WorkQueue(handleBatch);
  const { settleMs, maxBatchWaitMs, wholeDaySettleMs } = config.watch;
  const arrivals = new ArrivalWindow(
    { settleMs, maxWaitMs: maxBatchWaitMs, wholeDayMs: wholeDaySettleMs },
    (files) => holdsWholeDay(config, files),
    (files) => queue.addFiles(files),
  );
  const republish = () => {
    publishWanted = true;
    queue.exclusive(() => (publishWanted ? publishReadCopy(db, config, log) : Promise.resolve<PublishOutcome>({ published: true }))).then(
      (outcome) => {
        publishWanted = !outcome.published;
        if (!outcome.published) {
          wlog.debug({ reason: outcome.reason }, 'read copy not republished');
          retryPublishLater();
        }
      },
      (err: unknown) => wlog.debug({ err }, 'read copy not republished'),
    );
  };
  // a name left the inbox: end its hold between batches (one sweep waiting at a time; our own moves trigger it too)
  let sweepWaiting = false;
  const endVanishedHolds = () => {
    if (sweepWaiting || stopping) return;
    sweepWaiting = true;
    queue
      .exclusive(() => {
        sweepWaiting = false;
        return releaseVanished(db, config.inbox);
      })
      .then(
        (gone) => {
          if (gone.length === 0) return;
          wlog.info({ files: gone }, 'holds ended: the files left the inbox');
          republish();
        },
        // refused while stopping: the next start sweeps
        (err: unknown) => stopping || wlog.error({ err }, 'could not end the holds of files that left the inbox'),
      );
  };
  // one timer at a time; a batch in between publishes (or re-arms it) on its own
  let publishRetry: NodeJS.Timeout | null = null;
  const retryPublishLater = () => {
    if (publishRetry !== null || stopping) return;
    publishRetry = setTimeout(() => {
      publishRetry = null;
      if (publishWanted && !stopping) republish();
    }, config.watch.publishRetryMs);
    publishRetry.unref();
  };
  // deliverAlerts works on a session of its own, so it may run while a batch holds a transaction
  const delivery = new DeliveryLoop(() => deliverAlerts(db, config, log), republish, log);
  // `riskfold alerts retry` while this worker owns the database
  const retryRequests = watchRetryRequests(config, log, async (ids) => {
    const outcome = await queue.exclusive(() => rearmAlerts(db, config, ids));
    delivery.kick();
    return outcome;
  });

  let watcher: FSWatcher | null = null;
  let schedules: { stop(): void | Promise<void> } | null = null;
  let stopped: Promise<void> | null = null;
  const stop = () =>
    (stopped ??= (async () => {
      stopping = true;
      wlog.info({ waiting: queue.waiting }, 'stopping: finishing the current file');
      await watcher?.close();
      arrivals.close();
      if (publishRetry !== null) clearTimeout(publishRetry);
      await schedules?.stop();
      retryRequests.stop();
      await queue.stop();
      await delivery.stop();
      if (publishWanted && !fault) {
        await publishReadCopy(db, config, log).then(
          (outcome) => outcome.published || wlog.warn({ kind: 'disk_full' }, outcome.reason),
          (err: unknown) => wlog.error({ err }, 'final publish failed'),
        );
      }
      db.close();
      removePidFile(config);
      wlog.info('stopped');
      if (fault) rejectDone(fault);
      else resolveDone();
    })());

  try {
    // new arrivals queue up (lane still closed) while the catch-up list is made
    watcher = await watchInbox(config, log, (file) => arrivals.add(file), endVanishedHolds);
    await recoverAtStart(db, config, log);
    const present = listInbox(config.inbox, companionSuffixes(config));
    const stable = await Promise.all(present.map((f) => waitUntilStable(f, config.watch.stableMs, config.watch.pollMs)));
    const catchUp = present.filter((_, i) => stable[i]);
    wlog.info({ files: catchUp.map((f) => path.basename(f)) }, 'catching up on the inbox');
    // an empty catch-up still runs: it recomputes what a killed worker left uncovered and publishes a fresh copy
    if (!stopping) {
      queue.start(catchUp);
      schedules =
        options.startSchedules?.({
          config,
          log,
          exclusive: (fn) => queue.exclusive(() => fn(db)),
          deliverNow: () => delivery.kick(),
          republish,
        }) ?? null;
    }
  } catch (err) {
    fault = err;
    await stop().catch(() => undefined);
    throw err;
  }
  return { stop: () => stop().then(() => done), done, idle: () => queue.idle() };
}

async function openOwned(config: Config, log: Logger): Promise<Database> {
  try {
    return await openWorkspace(config, log);
  } catch (err) {
    if (err instanceof RiskfoldError && err.kind === 'database_locked') {
      throw new RiskfoldError(
        'database_locked',
        `${describeHolder(config, err.message)}; stop it first (while a worker runs, sql and status read its published copy)`,
        { file: config.database, cause: err },
      );
    }
    throw err;
  }
}
