import type { ConfigInput } from '../config/schema.ts';
import { ACCOUNTS, BASE_CURRENCY, BENCHMARKS } from './universe.ts';

/** The 63-day limit each account's mandate sets (on vol_ex_ante, sample estimator). */
export const DEMO_LIMIT_WINDOW = 63;

/**
 * pipeline.config.json of the demo folder: the minimal layout plus three windows, one
 * limit per account, the balanced account's benchmark, and suspect prices held out of
 * risk (the demo's 10x slip is carried over by the previous price until the custodian's
 * correction arrives).
 */
export function demoConfig(): ConfigInput {
  return {
    inbox: 'inbox',
    archive: 'archive',
    quarantine: 'quarantine',
    database: 'riskfold.duckdb',
    baseCurrency: BASE_CURRENCY,
    risk: { windows: [21, DEMO_LIMIT_WINDOW, 252], tradingDaysPerYear: 252 },
    benchmarks: Object.fromEntries(BENCHMARKS.map((b) => [b.portfolioId, b.id])),
    limits: ACCOUNTS.map((a) => ({ portfolio: a.id, metric: 'vol_ex_ante' as const, window: DEMO_LIMIT_WINDOW, limit: a.volLimit })),
    alerts: { file: 'alerts.jsonl' },
    checks: { suspectPrices: { mode: 'hold' } },
  };
}
