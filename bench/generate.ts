import { mkdirSync } from 'node:fs';
import path from 'node:path';
import { DuckDBInstance, type DuckDBConnection } from '@duckdb/node-api';
import type { FileKind } from '../src/config/schema.ts';
import { sqlString } from '../src/storage/database.ts';
import { CsvWriter } from './csvWriter.ts';
import { businessDays } from '../src/demo/market.ts';
import { createRandom, type Random } from '../src/demo/random.ts';
import type { ScenarioSize } from './scenario.ts';
import { inventHoldings, inventSecurities, simulateFactorMarket, type SimHolding, type SimSecurity, type SimulatedMarket } from './simulate.ts';

export interface ScenarioFile {
  kind: FileKind;
  path: string;
  rows: number;
}

export interface NewDay {
  date: string;
  /** The day's prices, fx and positions files, written outside the inbox. */
  files: ScenarioFile[];
}

export interface GeneratedScenario {
  size: ScenarioSize;
  seed: number;
  dir: string;
  /** The history: securities, fx, prices and positions files, in the order to ingest them. */
  history: ScenarioFile[];
  historyDates: string[];
  newDays: NewDay[];
  securities: SimSecurity[];
  holdings: SimHolding[];
  seconds: number;
}

export const DEFAULT_SEED = 20_160_104;
export const FIRST_DATE = '2016-01-04';
// about one price in 2,000 does not arrive, so stale carry-forward is part of the work
const MISSING_PRICE_RATE = 1 / 2000;

/** Writes an invented scenario (history files plus one folder per new day) into `dir`. */
export async function generateScenario(size: ScenarioSize, dir: string, seed = DEFAULT_SEED): Promise<GeneratedScenario> {
  const started = performance.now();
  const rng = createRandom(seed);
  const securities = inventSecurities(size.securities, rng);
  const holdings = inventHoldings(size.portfolios, size.holdingsPerPortfolio, securities, rng);
  const dates = businessDays(FIRST_DATE, size.historyDays + size.newDays);
  const market = simulateFactorMarket(securities, dates.length, rng);
  const historyDir = path.join(dir, 'history');
  mkdirSync(historyDir, { recursive: true });

  const history: ScenarioFile[] = [await writeSecurities(historyDir, securities)];
  history.push(await writeFx(path.join(historyDir, 'fx.csv'), market, dates, 0, size.historyDays));
  history.push(await writePrices(path.join(historyDir, 'prices.csv'), securities, market, dates, 0, size.historyDays, rng));
  const newDays: NewDay[] = [];
  const instance = await DuckDBInstance.create(':memory:');
  const conn = await instance.connect();
  try {
    await loadPositionInputs(conn, holdings, dates);
    history.push(await writePositions(conn, path.join(historyDir, 'positions.csv'), holdings.length, 0, size.historyDays));
    for (let t = size.historyDays; t < dates.length; t++) {
      const dayDir = path.join(dir, 'days', dates[t]);
      mkdirSync(dayDir, { recursive: true });
      const stamp = dates[t].replaceAll('-', '');
      newDays.push({
        date: dates[t],
        files: [
          await writeFx(path.join(dayDir, `fx_${stamp}.csv`), market, dates, t, t + 1),
          await writePrices(path.join(dayDir, `prices_${stamp}.csv`), securities, market, dates, t, t + 1, null),
          await writePositions(conn, path.join(dayDir, `positions_${stamp}.csv`), holdings.length, t, t + 1),
        ],
      });
    }
  } finally {
    conn.closeSync();
    instance.closeSync();
  }
  return {
    size,
    seed,
    dir,
    history,
    historyDates: dates.slice(0, size.historyDays),
    newDays,
    securities,
    holdings,
    seconds: (performance.now() - started) / 1000,
  };
}

async function writeSecurities(dir: string, securities: SimSecurity[]): Promise<ScenarioFile> {
  const out = new CsvWriter(path.join(dir, 'securities.csv'), 'security_id,name,asset_class,currency');
  for (const s of securities) out.line(`${s.id},${s.name},${s.assetClass},${s.currency}`);
  await out.close();
  return { kind: 'securities', path: out.path, rows: out.rows };
}

async function writeFx(file: string, market: SimulatedMarket, dates: string[], from: number, to: number): Promise<ScenarioFile> {
  const out = new CsvWriter(file, 'date,currency,rate');
  const k = market.fxCurrencies.length;
  for (let t = from; t < to; t++) {
    market.fxCurrencies.forEach((ccy, c) => out.line(`${dates[t]},${ccy},${market.fxRates[t * k + c].toFixed(6)}`));
  }
  await out.close();
  return { kind: 'fx', path: file, rows: out.rows };
}

/** Prices of days [from, to); with `gaps` some rows (never the first or last day's) are left out. */
async function writePrices(
  file: string,
  securities: SimSecurity[],
  market: SimulatedMarket,
  dates: string[],
  from: number,
  to: number,
  gaps: Random | null,
): Promise<ScenarioFile> {
  const out = new CsvWriter(file, 'date,security_id,price,currency');
  const n = securities.length;
  for (let t = from; t < to; t++) {
    const inside = t > from && t < to - 1;
    for (let i = 0; i < n; i++) {
      if (gaps && inside && gaps.uniform() < MISSING_PRICE_RATE) continue;
      const s = securities[i];
      out.line(`${dates[t]},${s.id},${market.prices[t * n + i].toFixed(4)},${s.currency}`);
    }
    await out.flushIfFull();
  }
  await out.close();
  return { kind: 'prices', path: file, rows: out.rows };
}

async function loadPositionInputs(conn: DuckDBConnection, holdings: SimHolding[], dates: string[]): Promise<void> {
  await conn.run('create table holdings (idx integer, portfolio_id varchar, security_id varchar, base_quantity double)');
  await conn.run('create table calendar (idx integer, date varchar)');
  const h = await conn.createAppender('holdings');
  holdings.forEach((x, i) => {
    h.appendInteger(i);
    h.appendVarchar(x.portfolioId);
    h.appendVarchar(x.securityId);
    h.appendDouble(x.baseQuantity);
    h.endRow();
  });
  h.flushSync();
  h.closeSync();
  const c = await conn.createAppender('calendar');
  dates.forEach((d, i) => {
    c.appendInteger(i);
    c.appendVarchar(d);
    c.endRow();
  });
  c.flushSync();
  c.closeSync();
}

/**
 * Daily snapshots of every holding for days [from, to), written by DuckDB's COPY: row n
 * is holding n % H on day n / H, so the file comes out ordered by date without a sort.
 * Quantities move once a month (every 21 business days) by up to +-10% around the
 * base, as a rebalancing would; the hash makes them a pure function of holding and month.
 */
async function writePositions(conn: DuckDBConnection, file: string, perDay: number, from: number, to: number): Promise<ScenarioFile> {
  await conn.run(`copy (
    with h as (select list(portfolio_id order by idx) as pf, list(security_id order by idx) as sec,
                      list(base_quantity order by idx) as qty from holdings),
         d as (select list(date order by idx) as dates from calendar)
    select d.dates[n // ${perDay} + 1] as date,
           h.pf[n % ${perDay} + 1] as portfolio_id,
           h.sec[n % ${perDay} + 1] as security_id,
           greatest(1, round(h.qty[n % ${perDay} + 1]
             * (1 + 0.02 * ((hash(n % ${perDay}, (n // ${perDay}) // 21) % 11)::integer - 5))))::bigint as quantity
    from range(${from * perDay}, ${to * perDay}) r(n), h, d
  ) to ${sqlString(file)} (header)`);
  return { kind: 'positions', path: file, rows: (to - from) * perDay };
}
