import type { Logger } from 'pino';
import type { Config } from '../config/load.ts';
import type { Database } from '../storage/database.ts';

export interface DeliverySummary {
  delivered: number;
  failed: number;
  pending: number;
}

// PLACEHOLDER: the alerts stage replaces this. Called after commit, never inside a transaction.
export async function deliverAlerts(_db: Database, _config: Config, _log: Logger, _options: { now?: Date } = {}): Promise<DeliverySummary> {
  return { delivered: 0, failed: 0, pending: 0 };
}
