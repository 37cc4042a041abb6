import path from 'node:path';
import { expect } from 'vitest';
import { runBatch } from '../../src/batch/runBatch.ts';
import type { ConfigInput } from '../../src/config/schema.ts';
import type { Database } from '../../src/storage/database.ts';
import { writeCsv, writeTwoHoldings } from '../helpers/files.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';

// Invented data for the history suites: 100 days of two securities held by one portfolio,
// then a price correction dated 2020-03-10.

export const KEPT = ['risk_daily', 'risk_contributions', 'limit_breaches', 'var_daily'] as const;
export type Kept = (typeof KEPT)[number];

/** Each kept table's key, to read it (or its as-of) in one order. */
export const ORDER: Record<Kept, string> = {
  risk_daily: 'portfolio_id, date, window_days, estimator',
  risk_contributions: 'portfolio_id, date, window_days, estimator, security_id',
  limit_breaches: 'breach_id',
  var_daily: 'portfolio_id, date, method, window_days, estimator',
};

/** A workspace after a first load; a low limit, so the load opens an episode that the correction then changes. */
export async function loadedWorkspace(overrides: Partial<ConfigInput> = {}): Promise<TempWorkspace> {
  const limits = [{ portfolio: '*', window: 21, limit: 0.01 }];
  const ws = await tempWorkspace({ risk: { windows: [21], tradingDaysPerYear: 252 }, limits, ...overrides });
  const first = writeTwoHoldings(ws.config.inbox, { days: 100, portfolio: 'acct-harbour', prices: 'prices_first.csv', positions: 'positions_first.csv' });
  expect((await runBatch(ws.db, ws.config, ws.log, first)).runError).toBeNull();
  return ws;
}

/** Writes the correction into the inbox; returns its path. */
export function correction(ws: TempWorkspace): string {
  return writeCsv(ws.config.inbox, 'prices_fix.csv', [
    ['date', 'security_id', 'price'],
    ['2020-03-10', 'EQ-NORDWIND', 112.5],
  ]);
}

/** `select * from <from>` in the key order of kept table `t`. */
export function readKept(db: Database, t: Kept, from: string = t): Promise<Record<string, unknown>[]> {
  return db.all(`select * from ${from} order by ${ORDER[t]}`);
}

/** A run's finished_at as text, to pass to an as-of macro. */
export async function finishedAt(db: Database, runId: number): Promise<string> {
  return (await db.all<{ ts: string }>('select finished_at::varchar as ts from risk_runs where run_id = $1', [runId]))[0].ts;
}
