import type { Config } from '../config/load.ts';
import { FILE_KINDS } from '../config/schema.ts';
import type { QueryResult } from './readQuery.ts';
import { expectedDeliveryDate, latestDeliveredDate } from '../schedule/jobs.ts';
import type { Database } from '../storage/database.ts';

/**
 * One line per file kind: the latest business date received, the last time a file of
 * that kind was taken in, and, for the kinds the missing-data check expects, whether the
 * files for the last business day (as of `now`) have arrived; null for kinds not expected.
 */
export async function readDeliveryStatus(db: Database, config: Config, now: Date): Promise<QueryResult> {
  const expectedFor = expectedDeliveryDate(config, now);
  const expected = new Set<string>(config.schedule.missingData.expect);
  const rows: unknown[][] = [];
  for (const kind of FILE_KINDS) {
    const latest = await latestDeliveredDate(db, kind);
    const [{ received_at }] = await db.all<{ received_at: string | null }>(
      "select strftime(max(received_at), '%Y-%m-%d %H:%M:%S') as received_at from ingested_files where kind = $1 and status = 'ingested'",
      [kind],
    );
    const isExpected = expected.has(kind);
    rows.push([kind, latest, received_at, isExpected ? expectedFor : null, isExpected ? latest !== null && latest >= expectedFor : null]);
  }
  return { columns: ['kind', 'latest_date', 'last_received_at', 'expected_for', 'arrived'], rows };
}
