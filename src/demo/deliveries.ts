import { holdingsOn } from './holdings.ts';
import { round } from './market.ts';
import type { Scenario } from './scenario.ts';
import { ACCOUNTS, BENCHMARKS, SECURITIES } from './universe.ts';

export interface DemoFile {
  name: string;
  text: string;
}

/** What the custodian drops into the inbox at one time; the worker processes it as one batch. */
export interface Delivery {
  label: string;
  /** The business date the delivery is for. */
  asOf: string;
  files: DemoFile[];
}

const compact = (date: string) => date.replaceAll('-', '');

function csv(header: string[], rows: (string | number)[][]): string {
  return [header, ...rows].map((r) => r.join(',')).join('\n') + '\n';
}

function priceRows(scenario: Scenario, t: number, skip: ReadonlySet<string> = new Set()): (string | number)[][] {
  const date = scenario.market.dates[t];
  return SECURITIES.filter((s) => !skip.has(s.id)).map((s) => [date, s.id, scenario.market.prices.get(s.id)![t], s.currency]);
}

function fxRows(scenario: Scenario, from: number, to: number): (string | number)[][] {
  return scenario.market.dates.slice(from, to).map((date, i) => [date, 'EUR', scenario.market.eurUsd[from + i]]);
}

function positionRows(quantities: ReadonlyMap<string, number>, date: string, portfolioId: string): (string | number)[][] {
  return [...quantities].filter(([, q]) => q !== 0).map(([id, q]) => [date, portfolioId, id, q]);
}

const PRICE_HEADER = ['date', 'security_id', 'price', 'currency'];
const POSITION_HEADER = ['date', 'portfolio_id', 'security_id', 'quantity'];
const FX_HEADER = ['date', 'currency', 'rate'];

function benchmarkRows(date: string): (string | number)[][] {
  return BENCHMARKS.flatMap((b) => Object.entries(b.weights).map(([id, w]) => [date, b.id, id, w]));
}

/** The history load: reference data and the first years as one file per kind. */
function historyLoad(scenario: Scenario): Delivery {
  const { dates } = scenario.market;
  const end = scenario.historyDays;
  const span = `${compact(dates[0])}_${compact(dates[end - 1])}`;
  const prices = dates.slice(0, end).flatMap((_, t) => priceRows(scenario, t));
  const positions = scenario.snapshots
    .filter((s) => s.date <= dates[end - 1])
    .flatMap((s) => positionRows(s.quantities, s.date, s.portfolioId));
  const securities = SECURITIES.map((s) => [s.id, s.name, s.assetClass, s.currency]);
  return {
    label: 'history load',
    asOf: dates[end - 1],
    files: [
      { name: 'securities.csv', text: csv(['security_id', 'name', 'asset_class', 'currency'], securities) },
      { name: `fx_history_${span}.csv`, text: csv(FX_HEADER, fxRows(scenario, 0, end)) },
      { name: `prices_history_${span}.csv`, text: csv(PRICE_HEADER, prices) },
      { name: `positions_history_${span}.csv`, text: csv(POSITION_HEADER, positions) },
      // the policy mix holds from the first date until a new one is sent
      { name: 'benchmarks.csv', text: csv(['date', 'benchmark_id', 'security_id', 'weight'], benchmarkRows(dates[0])) },
    ],
  };
}

/** One business day's files, with that day's mishap (if any) and the fix of the previous day's. */
function dailyDrop(scenario: Scenario, drop: number): Delivery {
  const { stale, correction, malformed } = scenario.incidents;
  const t = scenario.historyDays + drop;
  const date = scenario.market.dates[t];
  const day = compact(date);
  let prices = priceRows(scenario, t, drop === stale.drop ? new Set([stale.securityId]) : new Set());
  if (drop === correction.drop || drop === malformed.drop) {
    const target = drop === correction.drop ? correction.securityId : malformed.securityId;
    prices = prices.map((r) =>
      r[1] !== target ? r : [r[0], r[1], drop === correction.drop ? round(Number(r[2]) * correction.wrongFactor, 4) : -Number(r[2]), r[3]],
    );
  }
  const positions = ACCOUNTS.flatMap((a) => positionRows(holdingsOn(scenario.snapshots, a.id, date), date, a.id));
  const files: DemoFile[] = [
    { name: `fx_${day}.csv`, text: csv(FX_HEADER, fxRows(scenario, t, t + 1)) },
    { name: `prices_${day}.csv`, text: csv(PRICE_HEADER, prices) },
    { name: `positions_${day}.csv`, text: csv(POSITION_HEADER, positions) },
  ];
  const previous = scenario.market.dates[t - 1];
  if (drop === correction.drop + 1) {
    const right = priceRows(scenario, t - 1).filter((r) => r[1] === correction.securityId);
    files.push({ name: `prices_${compact(previous)}_correction.csv`, text: csv(PRICE_HEADER, right) });
  }
  if (drop === malformed.drop + 1) {
    files.push({ name: `prices_${compact(previous)}_resend.csv`, text: csv(PRICE_HEADER, priceRows(scenario, t - 1)) });
  }
  return { label: `drop ${drop + 1}`, asOf: date, files };
}

/** Every delivery in the order the custodian sends them: the history load, then one per business day. */
export function deliveriesOf(scenario: Scenario): Delivery[] {
  const drops = scenario.market.dates.length - scenario.historyDays;
  return [historyLoad(scenario), ...Array.from({ length: drops }, (_, d) => dailyDrop(scenario, d))];
}
