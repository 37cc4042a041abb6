import cron, { type ScheduledTask, type TaskContext } from 'node-cron';
import type { Logger } from 'pino';
import { deliverAlerts } from '../alerts/deliverAlerts.ts';
import type { Config } from '../config/load.ts';
import { RiskfoldError } from '../errors.ts';
import type { Database } from '../storage/database.ts';
import { checkMissingData, checkpointDatabase } from './jobs.ts';

export interface ScheduleDeps {
  db: Database;
  config: Config;
  log: Logger;
  /** Runs a job on the worker's serial queue; jobs that write to the database go there. */
  enqueue: (name: string, job: () => Promise<void>) => Promise<void>;
  /**
   * Starts a delivery of due alerts without waiting for it. Delivery runs beside the
   * queue (its own connection, its own serial lane), so a slow webhook never holds up
   * ingest. Default: deliverAlerts, a fault logged.
   */
  deliver?: () => void;
}

/**
 * Starts the cron jobs in config.schedule.timezone: the missing-data check, the retry
 * of undelivered alerts, the nightly checkpoint. The job bodies are plain functions of
 * (db, config, log, now) in ./jobs.ts; here they are only timed and queued.
 */
export function startSchedules(deps: ScheduleDeps): { stop(): void } {
  const { db, config } = deps;
  const log = deps.log.child({ stage: 'schedule' });
  const { timezone, missingData, retryAlerts, checkpoint } = config.schedule;
  checkSchedule(config);
  const deliver =
    deps.deliver ??
    (() => void deliverAlerts(db, config, log).catch((err: unknown) => log.error({ err }, 'alert delivery failed')));

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
      await deps.enqueue('missing-data', async () => void (await checkMissingData(db, config, log, now)));
      deliver();
    }),
    every('retry-alerts', retryAlerts, async () => deliver()),
    every('checkpoint', checkpoint, (now) => deps.enqueue('checkpoint', () => checkpointDatabase(db, config, log, now))),
  ];
  log.info({ timezone, jobs: tasks.map((t) => t.name) }, 'schedules started');
  return {
    stop() {
      for (const task of tasks) void task.destroy();
    },
  };
}

/** A wrong cron expression or time zone is the user's to fix: name the config field. */
function checkSchedule(config: Config): void {
  const fields: [string, string][] = [
    ['schedule.missingData.cron', config.schedule.missingData.cron],
    ['schedule.retryAlerts', config.schedule.retryAlerts],
    ['schedule.checkpoint', config.schedule.checkpoint],
  ];
  for (const [field, expression] of fields) {
    if (!cron.validate(expression)) {
      throw new RiskfoldError('config_invalid', `${config.configPath}: ${field} "${expression}" is not a cron expression`, {
        file: config.configPath,
      });
    }
  }
  try {
    new Intl.DateTimeFormat('en-US', { timeZone: config.schedule.timezone });
  } catch {
    throw new RiskfoldError('config_invalid', `${config.configPath}: schedule.timezone "${config.schedule.timezone}" is not an IANA time zone`, {
      file: config.configPath,
    });
  }
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
