import type { Database } from '../storage/database.ts';

export type AlertKind =
  | 'limit_opened'
  | 'limit_escalated'
  | 'limit_closed'
  | 'limit_retracted'
  | 'limit_state'
  | 'data_missing'
  | 'portfolio_unvalued'
  | 'price_suspect'
  | 'run_failed'
  | 'file_held'
  | 'file_rejected';

export interface NewAlert {
  /** Stable and unique: a receiver de-duplicates by it, a re-derived alert gets the same id. */
  alertId: string;
  kind: AlertKind;
  portfolioId: string | null;
  /** 'YYYY-MM-DD', the valuation date the alert is about. */
  asOf: string | null;
  /** Every alert says the state it describes: `level` and whether its episode is `open` or `closed`. */
  payload: Record<string, unknown> & { text: string; level: string; episode_state: 'open' | 'closed' };
  breachId?: number | null;
  runId?: number | null;
}

/**
 * Writes an alert to the outbox (the `alerts` table), due for delivery at once. Runs in
 * the caller's transaction, so an alert exists exactly when the results that caused it
 * were committed. Returns false, writing nothing, if that alert_id is already there.
 */
export async function insertAlert(db: Database, alert: NewAlert): Promise<boolean> {
  const existing = await db.all('select 1 from alerts where alert_id = $1', [alert.alertId]);
  if (existing.length > 0) return false;
  await db.run(
    `insert into alerts (alert_id, kind, portfolio_id, as_of, payload, breach_id, run_id)
     values ($1, $2, $3, $4::date, $5::json, $6, $7)`,
    [
      alert.alertId,
      alert.kind,
      alert.portfolioId,
      alert.asOf,
      JSON.stringify(alert.payload),
      alert.breachId ?? null,
      alert.runId ?? null,
    ],
  );
  return true;
}
