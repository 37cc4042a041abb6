import { simulateHoldings, type CashFlow, type Snapshot } from './holdings.ts';
import { businessDays, simulateMarket, type MarketPath, type Turbulence } from './market.ts';
import { ACCOUNTS } from './universe.ts';

export const DEFAULT_SEED = 20_260_417;

const FIRST_DAY = '2023-09-04';
const TRADING_DAYS = 760;
/** The last DROP_DAYS arrive one business day at a time; everything before is one history load. */
const DROP_DAYS = 100;

/** The custodian's mishaps, as indexes into the daily drops (0 = the first drop). */
export interface Incidents {
  /** A bond goes unpriced for one day: its price is carried forward, flagged stale. */
  stale: { drop: number; securityId: string };
  /** A wrong price, re-delivered right by a correction file with the next drop. */
  correction: { drop: number; securityId: string; wrongFactor: number };
  /** A prices file with a negative price (quarantined), re-sent clean with the next drop. */
  malformed: { drop: number; securityId: string };
  cashFlows: CashFlow[];
}

export interface Scenario {
  seed: number;
  market: MarketPath;
  /** Index of the first daily drop in market.dates. */
  historyDays: number;
  turbulence: Turbulence;
  snapshots: Snapshot[];
  incidents: Incidents;
}

/**
 * The whole invented history, deterministic in the seed: calm markets, a stretch of
 * stress that starts just before the daily drops (so the limit breach happens live),
 * then calm again long enough for the 63-day window to forget the stress.
 */
export function buildScenario(seed: number = DEFAULT_SEED): Scenario {
  const dates = businessDays(FIRST_DAY, TRADING_DAYS);
  const historyDays = TRADING_DAYS - DROP_DAYS;
  const turbulence = { from: historyDays - 3, to: historyDays + 17 };
  const market = simulateMarket({ seed, dates, turbulence });
  const cashFlows: CashFlow[] = [
    { date: midMonth(dates, Math.floor(historyDays * 0.6)), portfolioId: 'fpw-growth', amount: 350_000 },
    { date: midMonth(dates, historyDays + 45), portfolioId: 'fpw-income', amount: -200_000 },
  ];
  return {
    seed,
    market,
    historyDays,
    turbulence,
    snapshots: simulateHoldings(market, ACCOUNTS, cashFlows),
    incidents: {
      stale: { drop: 3, securityId: 'BD-GODWITFORD-29' },
      correction: { drop: 30, securityId: 'EQ-VELLANCE', wrongFactor: 1.09 },
      malformed: { drop: 55, securityId: 'EQ-OKENSHAW' },
      cashFlows,
    },
  };
}

/** The first date at or after index t that is not the first trading day of a month (not a rebalance day). */
function midMonth(dates: string[], t: number): string {
  let i = t;
  while (dates[i].slice(0, 7) !== dates[i - 1].slice(0, 7)) i++;
  return dates[i];
}
