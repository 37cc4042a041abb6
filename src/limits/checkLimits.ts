import type { Logger } from 'pino';
import type { Config } from '../config/load.ts';
import type { Database } from '../storage/database.ts';

export interface LimitScope {
  runId: number;
  /** 'YYYY-MM-DD' the run recomputed from; null: the whole history. */
  from: string | null;
  portfolios: string[] | null;
}

export interface LimitOutcome {
  alertsRaised: number;
  openEpisodes: number;
}

// PLACEHOLDER: the limits stage replaces this. Runs inside the risk transaction.
export async function checkLimits(_db: Database, _config: Config, _log: Logger, _scope: LimitScope): Promise<LimitOutcome> {
  return { alertsRaised: 0, openEpisodes: 0 };
}
