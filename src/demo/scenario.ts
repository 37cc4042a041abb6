import { simulateHoldings, type CashFlow, type Snapshot, type TargetChange } from './holdings.ts';
import { businessDays, simulateMarket, type MarketPath, type Turbulence } from './market.ts';
import { ACCOUNTS } from './universe.ts';

export const DEFAULT_SEED = 17;

const FIRST_DAY = '2023-09-04';
const TRADING_DAYS = 760;
/**
 * The last DROP_DAYS arrive one business day at a time; everything before is one history
 * load. Each drop is one batch with one recompute, so this sets most of the demo's run time.
 */
const DROP_DAYS = 14;

/** After the breach, the growth account's manager cuts equities to bring risk back within the mandate. */
const GROWTH_DEFENSIVE_TARGETS: Readonly<Record<string, number>> = {
  'EQ-BRAMBLEFORD': 0.05, 'EQ-QUILLBECK': 0.04, 'EQ-VELLANCE': 0.06, 'EQ-HARROWDEN': 0.06, 'EQ-TALLOWBY': 0.05,
  'EQ-NORDWIND': 0.04, 'EQ-CALDERWYN': 0.04, 'EQ-SORVIK': 0.03, 'EQ-MIRENZA': 0.03,
  'CM-EMBERSTONE': 0.04, 'BD-OSPREYVALE-31': 0.16, 'BD-KESTREL-28': 0.14, 'CASH:USD': 0.26,
};

/** The custodian's mishaps, as indexes into the daily drops (0 = the first drop). */
export interface Incidents {
  /** A bond goes unpriced for one day: its price is carried forward, flagged stale. */
  stale: { drop: number; securityId: string };
  /** A price ten times too high (a unit slip, flagged suspect), re-delivered right by a correction file with the next drop. */
  correction: { drop: number; securityId: string; wrongFactor: number };
  /** A prices file with a negative price (quarantined), re-sent clean with the next drop. */
  malformed: { drop: number; securityId: string };
  cashFlows: CashFlow[];
  /** The manager's answer to the breach: lower-risk targets from this drop on. */
  derisk: TargetChange & { drop: number };
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
 * The whole invented history, deterministic in the seed: calm markets, then a stretch of
 * stress that starts shortly before the daily drops, so the growth account's 63-day
 * volatility crosses its warning level and limit during the drops; its manager then
 * moves to lower-risk targets, which brings the ex-ante volatility (today's weights)
 * back below the clear level at once, while the realized figure still remembers the stress.
 */
export function buildScenario(seed: number = DEFAULT_SEED): Scenario {
  const dates = businessDays(FIRST_DAY, TRADING_DAYS);
  const historyDays = TRADING_DAYS - DROP_DAYS;
  const turbulence = { from: historyDays - 3, to: historyDays + 10 };
  const market = simulateMarket({ seed, dates, turbulence });
  const cashFlows: CashFlow[] = [
    { date: midMonth(dates, Math.floor(historyDays * 0.6)), portfolioId: 'fpw-growth', amount: 350_000 },
    { date: midMonth(dates, historyDays + 12), portfolioId: 'fpw-income', amount: -200_000 },
  ];
  const deriskDrop = 9;
  const derisk = { drop: deriskDrop, date: dates[historyDays + deriskDrop], portfolioId: 'fpw-growth', targets: GROWTH_DEFENSIVE_TARGETS };
  return {
    seed,
    market,
    historyDays,
    turbulence,
    snapshots: simulateHoldings(market, ACCOUNTS, cashFlows, [derisk]),
    incidents: {
      stale: { drop: 0, securityId: 'BD-OSPREYVALE-31' },
      correction: { drop: 1, securityId: 'EQ-VELLANCE', wrongFactor: 10 },
      malformed: { drop: 10, securityId: 'EQ-OKENSHAW' },
      cashFlows,
      derisk,
    },
  };
}

/** The first date at or after index t that is not the first trading day of a month (not a rebalance day). */
function midMonth(dates: string[], t: number): string {
  let i = t;
  while (dates[i].slice(0, 7) !== dates[i - 1].slice(0, 7)) i++;
  if (i >= dates.length) throw new Error(`no mid-month date at or after ${dates[t]}`);
  return dates[i];
}
