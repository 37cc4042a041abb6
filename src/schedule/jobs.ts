import type { Logger } from 'pino';
import type { Config } from '../config/load.ts';
import type { FileKind } from '../config/schema.ts';
import { insertAlert } from '../alerts/outbox.ts';
import { auditArchive, type AuditOutcome } from '../ingest/archiveAudit.ts';
import type { Database } from '../storage/database.ts';
import { localDate, previousBusinessDay } from './calendar.ts';

export interface MissingDataOutcome {
  /** The previous business day, in the schedule's time zone. */
  expectedDate: string;
  missing: FileKind[];
  alertsRaised: number;
}

/**
 * At its cron time on a business day: has every expected kind (prices, positions)
 * arrived for the previous business day, i.e. is there an ingested file of that kind
 * whose dates reach it? Each kind still missing raises one `data_missing` alert per
 * date (its alert_id is derived from kind and date, so a second check adds nothing).
 */
export async function checkMissingData(db: Database, config: Config, log: Logger, now: Date): Promise<MissingDataOutcome> {
  const { timezone } = config.schedule;
  const expectedDate = expectedDeliveryDate(config, now);
  const outcome: MissingDataOutcome = { expectedDate, missing: [], alertsRaised: 0 };
  for (const kind of config.schedule.missingData.expect) {
    const latest = await latestDeliveredDate(db, kind);
    if (latest !== null && latest >= expectedDate) continue;
    outcome.missing.push(kind);
    const raised = await insertAlert(db, {
      alertId: `data-missing-${kind}-${expectedDate}`,
      kind: 'data_missing',
      portfolioId: null,
      asOf: expectedDate,
      payload: {
        level: 'missing',
        // a missing file is not cleared by an alert: the next file ends it
        episode_state: 'open',
        file_kind: kind,
        expected_date: expectedDate,
        latest_date: latest,
        checked_at: now.toISOString(),
        time_zone: timezone,
        text: `no ${kind} file for ${expectedDate} has arrived (latest ${kind} date received: ${latest ?? 'none'})`,
      },
    });
    if (raised) outcome.alertsRaised++;
  }
  log.info({ stage: 'schedule', job: 'missing-data', ...outcome }, 'missing-data check done');
  return outcome;
}

/** The business day whose files should be in by `now`: the previous weekday in the schedule's time zone. */
export function expectedDeliveryDate(config: Config, now: Date): string {
  return previousBusinessDay(localDate(now, config.schedule.timezone));
}

/** The latest business date any ingested file of `kind` reaches; null when none has. */
export async function latestDeliveredDate(db: Database, kind: FileKind): Promise<string | null> {
  const [{ latest }] = await db.all<{ latest: string | null }>(
    "select max(max_date)::varchar as latest from ingested_files where kind = $1 and status = 'ingested'",
    [kind],
  );
  return latest;
}

/** The full archive audit: every archived file hashed again, whatever its size and mtime say. */
export async function auditArchiveInFull(db: Database, config: Config, log: Logger): Promise<AuditOutcome> {
  return auditArchive(db, log, { full: true, acknowledged: config.ingest.acknowledgedArchiveFiles });
}

/**
 * Writes the WAL into the database file. FORCE waits for a write in progress on
 * another connection (alert delivery) instead of failing, as plain CHECKPOINT would.
 */
export async function checkpointDatabase(db: Database, _config: Config, log: Logger, now: Date): Promise<void> {
  await db.run('force checkpoint');
  log.info({ stage: 'schedule', job: 'checkpoint', at: now.toISOString() }, 'database checkpoint done');
}
