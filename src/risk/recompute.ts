import type { Logger } from 'pino';
import type { Config } from '../config/load.ts';
import type { Database } from '../storage/database.ts';

export interface RecomputeRequest {
  /** What asked for it, e.g. 'ingest:prices_20261130.csv', 'recompute', 'demo'. */
  trigger: string;
  /** 'YYYY-MM-DD'; null or absent: full backfill. */
  from?: string | null;
  /** null or absent: every portfolio. */
  portfolios?: string[] | null;
}

export interface RunSummary {
  runId: number;
  from: string | null;
  to: string | null;
  portfolios: number;
  riskRows: number;
  alertsRaised: number;
  seconds: number;
}

// PLACEHOLDER: the risk stage replaces this.
export async function recompute(_db: Database, _config: Config, _log: Logger, _request: RecomputeRequest): Promise<RunSummary> {
  throw new Error('recompute is not built yet');
}
