import type { Logger } from 'pino';
import type { Config } from '../config/load.ts';
import { ALERT_RETRY_DEFAULTS } from '../config/schema.ts';
import type { Database } from '../storage/database.ts';
import { channelSecrets, configuredChannels, type AlertMessage, type Channel } from './channels.ts';
import { redactSecrets } from './redact.ts';

export interface DeliverySummary {
  /** Alerts every channel now has (this call). */
  delivered: number;
  /** Alerts a channel refused or did not answer for (this call); they are retried later. */
  failed: number;
  /** Alerts still undelivered after this call, including those past maxAttempts. */
  pending: number;
  /** When the earliest alert still to be retried is due (ISO 8601); null: none waits for a retry. */
  nextAttemptAt: string | null;
}

interface RetrySchedule {
  maxAttempts: number;
  retryBaseMs: number;
  retryMaxMs: number;
}

/** Calls on one database run one after another; a call made while one waits joins it. */
interface Lane {
  tail: Promise<unknown>;
  waiting: Promise<DeliverySummary> | null;
}
const lanes = new WeakMap<Database, Lane>();

/**
 * Delivers every due alert of the outbox to each configured channel that does not have
 * it yet (log, alerts file, webhook), at least once. Never inside a transaction: it uses
 * its own connection, so it can run beside the worker's queue without joining a
 * transaction there. A failed channel is recorded on the alert (attempts, last_error,
 * next_attempt_at) and the call still resolves; only a database fault rejects.
 */
export function deliverAlerts(db: Database, config: Config, log: Logger, options: { clock?: () => Date } = {}): Promise<DeliverySummary> {
  let lane = lanes.get(db);
  if (lane === undefined) {
    lane = { tail: Promise.resolve(), waiting: null };
    lanes.set(db, lane);
  }
  if (lane.waiting !== null) return lane.waiting;
  const current = lane;
  const pass = current.tail.then(() => {
    current.waiting = null;
    return deliverDue(db, config, log.child({ stage: 'alerts' }), options.clock ?? (() => new Date()));
  });
  current.waiting = pass;
  current.tail = pass.catch(() => undefined);
  return pass;
}

/** Resolves when no delivery runs on this database: await it before closing the database. */
export async function deliveriesSettled(db: Database): Promise<void> {
  await lanes.get(db)?.tail;
}

interface DueAlert {
  alert_id: string;
  kind: string;
  portfolio_id: string | null;
  as_of: string | null;
  payload: string;
  created_ms: string;
  attempts: number;
}

async function deliverDue(db: Database, config: Config, log: Logger, clock: () => Date): Promise<DeliverySummary> {
  const now = clock();
  const retry: RetrySchedule = config.alerts.webhook ?? ALERT_RETRY_DEFAULTS;
  const channels = configuredChannels(config, log);
  const session = await db.openSession();
  try {
    const due = await session.all<DueAlert>(
      `select alert_id, kind, portfolio_id, as_of, payload::varchar as payload, epoch_ms(created_at) as created_ms, attempts
       from alerts
       where delivered_at is null and attempts < $1 and (next_attempt_at is null or next_attempt_at <= $2::timestamptz)
       order by created_at, alert_id`,
      [retry.maxAttempts, now.toISOString()],
    );
    const summary: DeliverySummary = { delivered: 0, failed: 0, pending: 0, nextAttemptAt: null };
    for (const alert of due) {
      if (await deliverOne(session, channels, alert, clock, retry, channelSecrets(config), log)) summary.delivered++;
      else summary.failed++;
    }
    const [{ pending, next_ms }] = await session.all<{ pending: number; next_ms: string | null }>(
      `select count(*)::integer as pending, epoch_ms(min(coalesce(next_attempt_at, now())) filter (where attempts < $1))::varchar as next_ms
       from alerts where delivered_at is null`,
      [retry.maxAttempts],
    );
    summary.pending = pending;
    summary.nextAttemptAt = next_ms === null ? null : new Date(Number(next_ms)).toISOString();
    if (due.length > 0) log.info(summary, 'alerts delivered');
    return summary;
  } finally {
    session.close();
  }
}

async function deliverOne(
  db: Database,
  channels: Channel[],
  alert: DueAlert,
  clock: () => Date,
  retry: RetrySchedule,
  secrets: (string | undefined)[],
  log: Logger,
): Promise<boolean> {
  const done = await db.all<{ channel: string }>('select channel from alert_deliveries where alert_id = $1', [alert.alert_id]);
  const already = new Set(done.map((r) => r.channel));
  const message: AlertMessage = {
    alert_id: alert.alert_id,
    kind: alert.kind,
    portfolio_id: alert.portfolio_id,
    as_of: alert.as_of,
    created_at: new Date(Number(alert.created_ms)).toISOString(),
    payload: JSON.parse(alert.payload) as Record<string, unknown>,
  };
  const errors: string[] = [];
  for (const channel of channels) {
    if (already.has(channel.name)) continue;
    try {
      await channel.send(message);
    } catch (err) {
      // whatever a channel's error quotes, a secret never reaches last_error, the log or status
      errors.push(`${channel.name}: ${redactSecrets((err as Error).message, secrets)}`);
      continue;
    }
    await db.run('insert into alert_deliveries values ($1, $2, $3::timestamptz)', [alert.alert_id, channel.name, clock().toISOString()]);
  }
  const attempts = alert.attempts + 1;
  // read after the sends: the backoff counts from this alert's failure, not from the round's start
  const now = clock();
  if (errors.length === 0) {
    await db.run('update alerts set delivered_at = $1::timestamptz, attempts = $2, last_error = null, next_attempt_at = null where alert_id = $3', [
      now.toISOString(),
      attempts,
      alert.alert_id,
    ]);
    return true;
  }
  const next = new Date(now.getTime() + retryDelayMs(attempts, retry));
  const lastError = errors.join('; ');
  await db.run('update alerts set attempts = $1, last_error = $2, next_attempt_at = $3::timestamptz where alert_id = $4', [
    attempts,
    lastError,
    next.toISOString(),
    alert.alert_id,
  ]);
  const givenUp = attempts >= retry.maxAttempts;
  log[givenUp ? 'error' : 'warn'](
    { alert_id: alert.alert_id, attempts, error: lastError, next_attempt_at: givenUp ? null : next.toISOString() },
    givenUp ? 'alert delivery given up after maxAttempts; it stays undelivered' : 'alert delivery failed; will retry',
  );
  return false;
}

/**
 * Exponential backoff without jitter, so the schedule is predictable: after the n-th
 * failed attempt wait min(base * 2^(n-1), max). One worker sends, so there is no crowd
 * of clients for jitter to spread out.
 */
export function retryDelayMs(failedAttempts: number, retry: Pick<RetrySchedule, 'retryBaseMs' | 'retryMaxMs'>): number {
  return Math.min(retry.retryBaseMs * 2 ** Math.max(failedAttempts - 1, 0), retry.retryMaxMs);
}
