import type { Config } from '../config/load.ts';
import { ALERT_RETRY_DEFAULTS } from '../config/schema.ts';
import type { Database } from '../storage/database.ts';

export interface RearmOutcome {
  /** Alerts made due again, now. */
  rearmed: string[];
  /** Ids asked for that are not undelivered alerts (unknown, or already delivered). */
  notPending: string[];
}

/**
 * Makes undelivered alerts due for delivery again, with a fresh count of attempts: the
 * given ids, or without ids every alert that used up `maxAttempts`. Only the worker (or a
 * command when no worker runs) calls it: it writes the database.
 */
export async function rearmAlerts(db: Database, config: Config, ids: readonly string[]): Promise<RearmOutcome> {
  const { maxAttempts } = config.alerts.webhook ?? ALERT_RETRY_DEFAULTS;
  const rows = await db.all<{ alert_id: string }>(
    `update alerts set attempts = 0, next_attempt_at = null
     where delivered_at is null
       and (case when $1::varchar is null then attempts >= $2 else list_contains(from_json($1, '["VARCHAR"]'), alert_id) end)
     returning alert_id`,
    [ids.length === 0 ? null : JSON.stringify(ids), maxAttempts],
  );
  const rearmed = rows.map((r) => r.alert_id).sort();
  const done = new Set(rearmed);
  return { rearmed, notPending: ids.filter((id) => !done.has(id)) };
}
