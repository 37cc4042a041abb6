import type { Database } from '../../src/storage/database.ts';

/** Stored log returns by security and date, and non-riskless weights by "portfolio|date" and security. */
export interface StoredInputs {
  returns: Map<string, Map<string, number>>;
  weights: Map<string, Map<string, number>>;
}

/**
 * What the risk stage's estimates start from, read back from the views for a test's own
 * computation: every non-null log return, and every weight except base-currency cash
 * (riskless; cash in another currency carries its fx returns like a security).
 */
export async function readStoredInputs(db: Database): Promise<StoredInputs> {
  const returns = new Map<string, Map<string, number>>();
  const weights = new Map<string, Map<string, number>>();
  for (const r of await db.all<{ security_id: string; date: string; log_return: number | null }>('select security_id, date, log_return from ret_securities')) {
    if (r.log_return !== null) (returns.get(r.security_id) ?? returns.set(r.security_id, new Map()).get(r.security_id)!).set(r.date, r.log_return);
  }
  for (const r of await db.all<{ portfolio_id: string; date: string; security_id: string; weight: number }>(
    `select portfolio_id, date, security_id, weight from value_weights where security_id <> 'CASH:' || (select base_currency from pipeline_settings)`,
  )) {
    const key = `${r.portfolio_id}|${r.date}`;
    (weights.get(key) ?? weights.set(key, new Map()).get(key)!).set(r.security_id, r.weight);
  }
  return { returns, weights };
}
