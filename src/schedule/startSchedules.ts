import cron, { type ScheduledTask, type TaskContext } from 'node-cron';
import type { Logger } from 'pino';
import type { Config } from '../config/load.ts';
import type { ScheduleHost } from '../worker/startWorker.ts';
import { auditArchiveInFull, checkMissingData, checkpointDatabase } from './jobs.ts';

/**
 * Starts the cron jobs in config.schedule.timezone (expressions and zone checked when the
 * config was read, schema.ts): the missing-data check, the retry
 * of undelivered alerts, the nightly checkpoint, the full archive audit. The job bodies are plain functions of
 * (db, config, log, now) in ./jobs.ts; here they are only timed and handed to the
 * worker: jobs that write run through `host.exclusive` (the worker's serial queue,
 * between batches); delivery goes through `host.deliverNow`, beside the queue, so a
 * slow webhook never holds up ingest.
 */
export function startSchedules(host: ScheduleHost): { stop(): void } {
  const { config } = host;
  const log = host.log.child({ stage: 'schedule' });
  const { timezone, missingData, retryAlerts, checkpoint, archiveAudit } = config.schedule;

  const every = (name: string, expression: string, body: (now: Date) => Promise<void>): ScheduledTask =>
    cron.schedule(
      expression,
      async (ctx: TaskContext) => {
        try {
          await body(ctx.date);
        } catch (err) {
          log.error({ job: name, err }, 'scheduled job failed');
        }
      },
      { name, timezone, noOverlap: true, logger: cronLogger(log) },
    );

  const tasks = [
    every('missing-data', missingData.cron, async (now) => {
      await host.exclusive((db) => checkMissingData(db, config, log, now));
      host.deliverNow();
    }),
    every('retry-alerts', retryAlerts, async () => host.deliverNow()),
    every('checkpoint', checkpoint, (now) => host.exclusive((db) => checkpointDatabase(db, config, log, now))),
    every('archive-audit', archiveAudit, async () => {
      const outcome = await host.exclusive((db) => auditArchiveInFull(db, config, log));
      if (outcome.found.length > 0 || outcome.resolved.length > 0) host.republish();
    }),
  ];
  log.info({ timezone, jobs: tasks.map((t) => t.name) }, 'schedules started');
  return {
    stop() {
      for (const task of tasks) void task.destroy();
    },
  };
}

/** node-cron's own warnings (a job still running at its next time) go to our log. */
function cronLogger(log: Logger) {
  return {
    info: (message: string) => log.info(message),
    warn: (message: string) => log.warn(message),
    error: (message: string | Error, err?: Error) => log.error({ err: err ?? message }, String(message)),
    debug: (message: string | Error) => log.debug(String(message)),
  };
}
