import { createHash } from 'node:crypto';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { DuckDBInstance } from '@duckdb/node-api';
import * as ss from 'simple-statistics';
import { afterEach, describe, expect, it } from 'vitest';
import { generateScenario } from '../../bench/generate.ts';
import { SIZES } from '../../bench/scenario.ts';
import { CASH_ID, inventSecurities, modelCovariance, simulateFactorMarket } from '../../bench/simulate.ts';
import { createRandom } from '../../src/demo/random.ts';
import { sqlString } from '../../src/storage/database.ts';

const tiny = SIZES.tiny;
const dirs: string[] = [];
const tempDir = () => {
  const dir = mkdtempSync(path.join(tmpdir(), 'riskfold-bench-gen-'));
  dirs.push(dir);
  return dir;
};
afterEach(() => {
  for (const dir of dirs.splice(0)) rmSync(dir, { recursive: true, force: true });
});

async function duckQuery(sql: string): Promise<Record<string, unknown>[]> {
  const instance = await DuckDBInstance.create(':memory:');
  const conn = await instance.connect();
  try {
    return (await conn.runAndReadAll(sql)).getRowObjectsJson() as Record<string, unknown>[];
  } finally {
    conn.closeSync();
    instance.closeSync();
  }
}

const sha256 = (file: string) => createHash('sha256').update(readFileSync(file)).digest('hex');

describe('generateScenario', () => {
  it('writes the history files in the canonical layout, with the row counts it reports (counted by DuckDB read_csv)', async () => {
    const s = await generateScenario(tiny, tempDir());
    expect(s.history.map((f) => f.kind)).toEqual(['securities', 'fx', 'prices', 'positions']);
    const headers = s.history.map((f) => readFileSync(f.path, 'utf8').split('\n')[0]);
    expect(headers).toEqual([
      'security_id,name,asset_class,currency',
      'date,currency,rate',
      'date,security_id,price,currency',
      'date,portfolio_id,security_id,quantity',
    ]);
    for (const f of s.history) {
      const [row] = await duckQuery(`select count(*)::integer as n from read_csv(${sqlString(f.path)})`);
      expect(row.n, f.kind).toBe(f.rows);
    }
    const positions = s.history.find((f) => f.kind === 'positions')!;
    expect(positions.rows).toBe(tiny.historyDays * tiny.portfolios * (tiny.holdingsPerPortfolio + 1));
  });

  it('writes daily snapshots ordered by date, every holding every day, cash included, quantities positive', async () => {
    const s = await generateScenario(tiny, tempDir());
    const file = sqlString(s.history.find((f) => f.kind === 'positions')!.path);
    const [shape] = await duckQuery(`
      with p as (select *, row_number() over () as line from read_csv(${file}))
      select count(distinct date)::integer as dates,
             count(*) filter (where security_id = ${sqlString(CASH_ID)})::integer as cash_rows,
             min(quantity) > 0 as positive_quantities,
             bool_and(date >= coalesce(prev_date, date)) as ordered
      from (select *, lag(date) over (order by line) as prev_date from p)`);
    expect(shape).toEqual({ dates: tiny.historyDays, cash_rows: tiny.historyDays * tiny.portfolios, positive_quantities: true, ordered: true });
    const [perDay] = await duckQuery(`
      select min(n)::integer as fewest, max(n)::integer as most
      from (select date, count(*) as n from read_csv(${file}) group by date)`);
    expect(perDay).toEqual({ fewest: s.holdings.length, most: s.holdings.length });
    const [distinct] = await duckQuery(`
      select min(n)::integer as fewest, max(n)::integer as most
      from (select count(distinct security_id) as n from read_csv(${file}) group by date, portfolio_id)`);
    expect(distinct).toEqual({ fewest: tiny.holdingsPerPortfolio + 1, most: tiny.holdingsPerPortfolio + 1 });
  });

  it('follows the history with one folder per new business day holding its fx, prices and positions files', async () => {
    const s = await generateScenario(tiny, tempDir());
    expect(s.newDays).toHaveLength(tiny.newDays);
    // 2016-04-08 is a Friday, so the first new day is Monday 2016-04-11 (calendar, from memory)
    expect(s.historyDates.at(-1)).toBe('2016-04-08');
    expect(s.newDays[0].date).toBe('2016-04-11');
    for (const day of s.newDays) {
      expect(day.files.map((f) => path.basename(f.path))).toEqual(
        ['fx', 'prices', 'positions'].map((k) => `${k}_${day.date.replaceAll('-', '')}.csv`),
      );
      const prices = day.files.find((f) => f.kind === 'prices')!;
      expect(prices.rows).toBe(tiny.securities);
    }
  });

  it('is the same bytes for the same seed and different bytes for another', async () => {
    const a = await generateScenario(tiny, tempDir(), 7);
    const b = await generateScenario(tiny, tempDir(), 7);
    const c = await generateScenario(tiny, tempDir(), 8);
    const prices = (s: typeof a) => sha256(s.history.find((f) => f.kind === 'prices')!.path);
    expect(prices(a)).toBe(prices(b));
    expect(prices(a)).not.toBe(prices(c));
  });
});

describe('simulateFactorMarket', () => {
  // 20,000 days make the sampling error of a correlation (1 - rho^2) / sqrt(n) at most 0.007
  const days = 20_000;
  const securities = inventSecurities(10, createRandom(11));
  const market = simulateFactorMarket(securities, days, createRandom(12));
  const logReturns = (i: number) => {
    const n = securities.length;
    const out: number[] = [];
    for (let t = 1; t < days; t++) out.push(Math.log(market.prices[t * n + i] / market.prices[(t - 1) * n + i]));
    return out;
  };

  it('gives each security the variance its factor model implies (simple-statistics sampleVariance)', () => {
    securities.forEach((sec, i) => {
      const model = modelCovariance(sec, sec);
      // relative standard error of a sample variance is sqrt(2 / n) = 1%: allow 4 of them
      expect(Math.abs(ss.sampleVariance(logReturns(i)) / model - 1), sec.id).toBeLessThan(0.04);
    });
  });

  it('correlates securities as the shared factors imply (simple-statistics sampleCorrelation)', () => {
    for (let i = 0; i < securities.length; i++) {
      for (let j = i + 1; j < securities.length; j++) {
        const a = securities[i];
        const b = securities[j];
        const model = modelCovariance(a, b) / Math.sqrt(modelCovariance(a, a) * modelCovariance(b, b));
        expect(Math.abs(ss.sampleCorrelation(logReturns(i), logReturns(j)) - model), `${a.id} ${b.id}`).toBeLessThan(0.03);
      }
    }
  });
});
