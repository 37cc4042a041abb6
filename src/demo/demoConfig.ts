import type { ConfigInput } from '../config/schema.ts';
import { ACCOUNTS, BASE_CURRENCY, BENCHMARKS } from './universe.ts';

/** The 63-day limit each account's mandate sets (on vol_ex_ante, sample estimator). */
export const DEMO_LIMIT_WINDOW = 63;

/**
 * pipeline.config.json of the demo folder: the minimal layout plus three windows (the
 * limit's window also with the shrunk estimator), one volatility limit per account, a
 * watch on each account's backtest zone, the balanced account's benchmark, a few stress scenarios of the invented market (a range of its own
 * history and shocks), and suspect prices held out of risk (the demo's 10x slip is
 * carried over by the previous price until the custodian's correction arrives).
 */
export function demoConfig(): ConfigInput {
  return {
    inbox: 'inbox',
    archive: 'archive',
    quarantine: 'quarantine',
    database: 'riskfold.duckdb',
    baseCurrency: BASE_CURRENCY,
    // the limit's window also shrunk toward constant correlation, to compare with the sample figure
    risk: { windows: [21, DEMO_LIMIT_WINDOW, 252], tradingDaysPerYear: 252, shrunk: { windows: [DEMO_LIMIT_WINDOW] } },
    benchmarks: Object.fromEntries(BENCHMARKS.map((b) => [b.portfolioId, b.id])),
    limits: [
      ...ACCOUNTS.map((a) => ({ portfolio: a.id, metric: 'vol_ex_ante' as const, window: DEMO_LIMIT_WINDOW, limit: a.volLimit })),
      { portfolio: '*', metric: 'backtest_zone' as const, window: DEMO_LIMIT_WINDOW },
    ],
    alerts: { file: 'alerts.jsonl' },
    stress: {
      scenarios: [
        { id: 'may-2024-slide', kind: 'historical', from: '2024-05-03', to: '2024-05-17' },
        { id: 'equities-25-euro-10', kind: 'hypothetical', shocks: [{ assetClass: 'equity', return: -0.25 }, { currency: 'EUR', return: -0.1 }] },
        { id: 'rates-up-bonds-8', kind: 'hypothetical', shocks: [{ assetClass: 'bond', return: -0.08 }] },
        { id: 'everything-15', kind: 'hypothetical', shocks: [{ all: true, return: -0.15 }] },
      ],
    },
    checks: { suspectPrices: { mode: 'hold' } },
  };
}
