import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { runRecompute } from '../../src/batch/runRecompute.ts';
import type { ConfigInput } from '../../src/config/schema.ts';
import { refreshDerived } from '../../src/storage/derived.ts';
import { insertFx, insertPositions, insertPrices, insertSecurities } from '../helpers/rawRows.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';
import { SP500_CLOSES, SP500_DATES } from '../risk/math/data/sp500Closes2008.ts';

/**
 * The loss stage on a real, open price series: the S&P 500 closes of 2008 (vega-datasets
 * 3.2.1, data/sp500-2000.csv, see test/risk/math/data/sp500Closes2008.ts) as the price
 * of one holding worth 1,000,000 USD at the close of 2008-12-31, beside 500,000 USD of
 * cash and 100,000 EUR of cash at a constant 1.1 USD per EUR (neither moves).
 */

const LAST = SP500_DATES.length - 1;
const UNITS = 1_000_000 / SP500_CLOSES[LAST];
const closeOn = (date: string) => SP500_CLOSES[SP500_DATES.indexOf(date)];
const LAMBDA = 0.94;
const SEED_DAYS = 21;

let ws: TempWorkspace;

beforeAll(async () => {
  ws = await tempWorkspace({
    risk: { windows: [21], tradingDaysPerYear: 252, historical: { days: [250, 200] }, ewma: { enabled: true, lambda: LAMBDA, seedDays: SEED_DAYS } },
    limits: [],
    stress: {
      scenarios: [
        { id: 'autumn-2008', kind: 'historical', from: '2008-09-26', to: '2008-10-10' },
        { id: 'before-history', kind: 'historical', from: '2001-09-10', to: '2001-09-21' },
        // partly stored: the series begins 2008-01-02 and ends 2008-12-31
        { id: 'reaches-before-history', kind: 'historical', from: '2007-12-20', to: '2008-01-10' },
        { id: 'runs-past-history', kind: 'historical', from: '2008-12-24', to: '2009-01-09' },
        { id: 'equities-down-euro-down', kind: 'hypothetical', shocks: [{ all: true, return: -0.2 }, { currency: 'EUR', return: -0.1 }] },
      ],
    },
  });
  await insertSecurities(ws.db, 1, [['IX-BROAD', 'broad index', 'equity', 'USD']]);
  await insertPrices(ws.db, 2, SP500_DATES.map((date, t) => [date, 'IX-BROAD', SP500_CLOSES[t], 'USD']));
  await insertFx(ws.db, 3, SP500_DATES.map((date) => [date, 'EUR', 1.1]));
  await insertPositions(ws.db, 4, [
    [SP500_DATES[0], 'acct-index', 'IX-BROAD', UNITS],
    [SP500_DATES[0], 'acct-index', 'CASH:USD', 500_000],
    [SP500_DATES[0], 'acct-index', 'CASH:EUR', 100_000],
  ]);
  await runRecompute(ws.db, ws.config, ws.log, { trigger: 'test' });
}, 60_000);

afterAll(() => ws?.cleanup());

/** A row with its numbers to 12 significant digits. */
const rounded = (row: Record<string, unknown>) => Object.fromEntries(Object.entries(row).map(([k, v]) => [k, typeof v === 'number' ? Number(v.toPrecision(12)) : v]));

const lossOn = (before: number, after: number) => 1_000_000 * (1 - after / before);

describe('var_daily on the S&P 500 closes of 2008', () => {
  it('gives as 250-day historical 99% VaR the 3rd largest loss (2008-09-29) and as 97.5% ES the mean of the 7 largest (by hand from the closes)', async () => {
    const [row] = await ws.db.all<{ var_99_1d: number; es_975_1d: number; coverage: number; status: string }>(
      `select var_99_1d, es_975_1d, coverage, status from var_daily where method = 'historical' and window_days = 250 and date = '2008-12-31'`,
    );
    // the same worst days as the math test: cash (USD, and EUR at a constant rate) adds no loss
    expect(row.var_99_1d).toBeCloseTo(lossOn(1213.27002, 1106.420044), 4);
    const worstSeven = [
      [998.01001, 907.840027],
      [896.23999, 816.210022],
      [1213.27002, 1106.420044],
      [984.940002, 909.919983],
      [806.580017, 752.440002],
      [859.119995, 806.580017],
      [955.049988, 896.780029],
    ].map(([a, b]) => lossOn(a, b));
    expect(row.es_975_1d).toBeCloseTo(worstSeven.reduce((a, b) => a + b, 0) / 7, 4);
    expect(row).toMatchObject({ coverage: 1, status: 'ok' });
  });

  it('says insufficient_history, with no figure, where fewer than N returns exist (never a silent zero)', async () => {
    const rows = await ws.db.all<{ n: number; figures: number }>(
      `select count(*)::integer as n, count(var_99_1d)::integer as figures from var_daily
       where method = 'historical' and window_days = 250 and status = 'insufficient_history'`,
    );
    // 251 closes: only the last date has 250 returns
    expect(rows).toEqual([{ n: LAST, figures: 0 }]);
  });

  it('matches a plain re-computation of the filtered historical simulation (Hull and White 1998: r x sigma_today / sigma_then, EWMA sigma)', async () => {
    const r = SP500_CLOSES.slice(1).map((c, t) => Math.log(c / SP500_CLOSES[t]));
    // sigma2After[t]: EWMA variance after return t, seeded with the EWMA-weighted mean of the first SEED_DAYS squares
    const sigma2After: number[] = [];
    for (let t = 0; t < r.length; t++) {
      if (t < SEED_DAYS - 1) sigma2After.push(Number.NaN);
      else if (t === SEED_DAYS - 1) {
        let m = 0;
        for (let k = 0; k < SEED_DAYS; k++) m += (1 - LAMBDA) * LAMBDA ** k * r[t - k] ** 2;
        sigma2After.push(m / (1 - LAMBDA ** SEED_DAYS));
      } else sigma2After.push(LAMBDA * sigma2After[t - 1] + (1 - LAMBDA) * r[t] ** 2);
    }
    const today = Math.sqrt(sigma2After[r.length - 1]);
    const losses = r
      .slice(r.length - 200)
      .map((x, s) => {
        const t = r.length - 200 + s;
        return -1_000_000 * Math.expm1((x * today) / Math.sqrt(sigma2After[t - 1]));
      })
      .sort((a, b) => b - a);
    const [row] = await ws.db.all<{ var_99_1d: number; es_975_1d: number }>(
      `select var_99_1d, es_975_1d from var_daily where method = 'filtered_historical' and window_days = 200 and date = '2008-12-31'`,
    );
    // k = ceil(200 x 0.01) = 2, k' = ceil(200 x 0.025) = 5 (SPEC section 9)
    expect(row.var_99_1d).toBeCloseTo(losses[1], 6);
    expect(row.es_975_1d).toBeCloseTo((losses[0] + losses[1] + losses[2] + losses[3] + losses[4]) / 5, 6);
  });

  it('copies the normal figures from risk_daily, so one table compares the methods', async () => {
    const rows = await ws.db.all<{ n: number }>(
      `select count(*)::integer as n from var_daily v join risk_daily d using (portfolio_id, date, window_days, estimator)
       where v.method = 'normal' and v.var_99_1d is not distinct from d.var_99_1d and v.es_975_1d is not distinct from d.es_975_1d`,
    );
    const all = await ws.db.all<{ n: number }>('select count(*)::integer as n from risk_daily');
    expect(rows).toEqual(all);
  });
});

describe('var_backtest on the S&P 500 closes of 2008', () => {
  it('tests the VaR of the day before against previous value x simple holdings return, loss > VaR strictly', async () => {
    const rows = await ws.db.all<{ date: string; var_99_1d: number; pnl: number; exception: boolean; predicted: number; value_before: number }>(
      `select b.date, b.var_99_1d, b.pnl, b.exception, v.var_99_1d as predicted, p.value_base as value_before
       from var_backtest b
       join align_valuation_dates d on d.date = b.date
       join align_valuation_dates dp on dp.date_index = d.date_index - 1
       join var_daily v on v.portfolio_id = b.portfolio_id and v.date = dp.date and v.method = b.method and v.window_days = b.window_days
         and v.estimator is not distinct from b.estimator
       join value_portfolios p on p.portfolio_id = b.portfolio_id and p.date = dp.date
       where b.method = 'normal' and b.window_days = 21 order by b.date`,
    );
    // the first VaR of a 21-day window is at the 22nd close: 251 - 22 tested days
    expect(rows.length).toBe(SP500_DATES.length - 22);
    for (const row of rows) {
      const t = SP500_DATES.indexOf(row.date);
      // only the index moves: 1,610,000 of value, of which UNITS x close in the index
      const expected = UNITS * (SP500_CLOSES[t] - SP500_CLOSES[t - 1]);
      expect(row.pnl).toBeCloseTo(expected, 6);
      expect(row.var_99_1d).toBe(row.predicted);
      expect(row.exception).toBe(-row.pnl > row.predicted);
    }
  });

  it("counts exceptions and gives Kupiec's LR and p-value (Kupiec 1995 formula, chi-squared 1 d.o.f.); no zone before 250 tested days", async () => {
    const [last] = await ws.db.all<{ tested_days: number; exceptions_250: number; kupiec_lr: number; kupiec_p: number; zone: string | null; counted: number }>(
      `select tested_days, exceptions_250, kupiec_lr, kupiec_p, zone,
              (select count(*) filter (where exception)::integer from var_backtest where method = 'normal' and window_days = 21) as counted
       from var_backtest where method = 'normal' and window_days = 21 order by date desc limit 1`,
    );
    const T = last.tested_days;
    const x = last.exceptions_250;
    expect(T).toBe(SP500_DATES.length - 22);
    expect(x).toBe(last.counted);
    // LR = -2 ln[(1 - p)^(T - x) p^x] + 2 ln[(1 - x/T)^(T - x) (x/T)^x], p = 0.01
    const lr = -2 * ((T - x) * Math.log(0.99) + x * Math.log(0.01)) + 2 * ((T - x) * Math.log(1 - x / T) + (x > 0 ? x * Math.log(x / T) : 0));
    expect(last.kupiec_lr).toBeCloseTo(lr, 9);
    expect(last.zone).toBeNull();
  });
});

describe('stress_results on the S&P 500 closes of 2008', () => {
  const value = 1_000_000 + 500_000 + 110_000;

  it('compounds a historical range into close(to) / close(from) - 1 and applies it to the latest holdings', async () => {
    const [row] = await ws.db.all(`select * from stress_results where scenario_id = 'autumn-2008'`);
    const move = closeOn('2008-10-10') / closeOn('2008-09-26') - 1;
    expect(row).toMatchObject({ date: '2008-12-31', kind: 'historical', coverage: 1, missing: [], range_from: '2008-09-26', range_to: '2008-10-10' });
    expect(row.pnl_base).toBeCloseTo(1_000_000 * move, 6);
    expect(row.pnl_pct).toBeCloseTo((1_000_000 * move) / value, 12);
  });

  it.each([
    ['before-history', '2001-09-10', '2001-09-21'],
    ['reaches-before-history', '2007-12-20', '2008-01-10'],
    ['runs-past-history', '2008-12-24', '2009-01-09'],
  ])('flags range %s, not all of it stored, instead of counting its unseen days as unchanged', async (id, from, to) => {
    const [row] = await ws.db.all(`select pnl_base, pnl_pct, coverage, missing, range_from, range_to from stress_results where scenario_id = $1`, [id]);
    // USD cash cannot move against the base currency, so it is not named; the rest has no data
    expect(row).toEqual({ pnl_base: null, pnl_pct: null, coverage: 0, missing: ['CASH:EUR', 'IX-BROAD'], range_from: from, range_to: to });
  });

  it('moves the index by the all shock and the EUR cash by the currency shock, USD cash not at all', async () => {
    const [row] = await ws.db.all<{ pnl_base: number }>(`select pnl_base from stress_results where scenario_id = 'equities-down-euro-down'`);
    expect(row.pnl_base).toBeCloseTo(-0.2 * 1_000_000 - 0.1 * 110_000, 6);
  });

  it('finds the worst day of its own history by brute force over the holdings returns w_t-1 x index move (2008-09-29, not the index\'s worst, 2008-10-15)', async () => {
    const [row] = await ws.db.all<{ pnl_pct: number; pnl_base: number; range_from: string; range_to: string }>(
      `select pnl_pct, pnl_base, range_from, range_to from stress_results where scenario_id = 'worst_1d'`,
    );
    // the cash is 610,000 USD throughout, so the index's weight is highest when its close is
    let worst = Infinity;
    let at = 0;
    for (let t = 1; t <= LAST; t++) {
      const weight = (UNITS * SP500_CLOSES[t - 1]) / (UNITS * SP500_CLOSES[t - 1] + 610_000);
      const move = weight * (SP500_CLOSES[t] / SP500_CLOSES[t - 1] - 1);
      if (move < worst) [worst, at] = [move, t];
    }
    expect(SP500_DATES[at]).toBe('2008-09-29');
    expect(row).toMatchObject({ range_from: SP500_DATES[at - 1], range_to: SP500_DATES[at] });
    expect(row.pnl_pct).toBeCloseTo(worst, 12);
    expect(row.pnl_base).toBeCloseTo(worst * value, 6);
  });
});

describe('a recompute from a later date', () => {
  it('continues the backtest counts from the stored flags and rewrites exactly what a full backfill wrote', async () => {
    const tables = {
      var_daily: 'portfolio_id, date, method, window_days, estimator',
      var_backtest: 'portfolio_id, date, method, window_days, estimator',
      stress_results: 'portfolio_id, date, scenario_id',
    };
    // the EWMA continues from its stored matrix and sums run in another order: equal to 12 significant digits
    const read = async () => {
      const out: Record<string, unknown[]> = {};
      for (const [table, order] of Object.entries(tables)) {
        out[table] = (await ws.db.all(`select * exclude (run_id) from ${table} order by ${order}`)).map(rounded);
      }
      return out;
    };
    const full = await read();
    await runRecompute(ws.db, ws.config, ws.log, { trigger: 'test', from: '2008-10-01' });
    expect(await read()).toEqual(full);
    const runs = await ws.db.all(`select distinct run_id from var_backtest where date >= '2008-10-01'`);
    expect(runs).toEqual([{ run_id: 2 }]);
  });
});

/**
 * A workspace holding the index and USD cash, run over the history up to 2008-10-14, then
 * 2008-10-15 (the index's worst day) as a new day: stress rows stored at both dates.
 */
async function runUpToThenNewDay(stress: ConfigInput['stress'] = { scenarios: [] }): Promise<{ day: TempWorkspace; cut: number }> {
  // 100 and 50 scenarios: a new day reads the returns of its last 101 dates only, so a range in February lies before them
  const day = await tempWorkspace({ risk: { windows: [21], tradingDaysPerYear: 252, historical: { days: [100, 50] } }, limits: [], stress });
  await insertPrices(day.db, 2, SP500_DATES.map((date, t) => [date, 'IX-BROAD', SP500_CLOSES[t], 'USD']));
  await insertPositions(day.db, 4, [
    [SP500_DATES[0], 'acct-index', 'IX-BROAD', UNITS],
    [SP500_DATES[0], 'acct-index', 'CASH:USD', 500_000],
  ]);
  const cut = SP500_DATES.indexOf('2008-10-15');
  await day.db.run(`delete from prices where date >= $1::date`, [SP500_DATES[cut]]);
  await refreshDerived(day.db);
  await runRecompute(day.db, day.config, day.log, { trigger: 'history' });
  await insertPrices(day.db, 5, [[SP500_DATES[cut], 'IX-BROAD', SP500_CLOSES[cut], 'USD']]);
  await runRecompute(day.db, day.config, day.log, { trigger: 'new day', from: SP500_DATES[cut] });
  return { day, cut };
}

describe('a new day after a run', () => {
  it('continues the worst windows from the stored ones, reads a range before its rows on its own, and writes what a full backfill writes', async () => {
    const { day, cut } = await runUpToThenNewDay({ scenarios: [{ id: 'february-2008', kind: 'historical', from: '2008-02-01', to: '2008-02-21' }] });
    try {
      const read = `select scenario_id, pnl_base, pnl_pct, coverage, range_from, range_to from stress_results where date = '${SP500_DATES[cut]}' order by scenario_id`;
      const incremental = await day.db.all(read);
      expect(day.logLines().filter((l) => l.msg === 'inputs read').at(-1)?.returnsFrom).toBeGreaterThan(SP500_DATES.indexOf('2008-02-21'));
      await runRecompute(day.db, day.config, day.log, { trigger: 'full' });
      expect(incremental).toEqual(await day.db.all(read));
      expect(incremental.map((r) => r.scenario_id)).toEqual(['february-2008', 'worst_1d', 'worst_20d', 'worst_5d']);
      // the index's move over the range, by hand from the closes, on the holding's value at the cut
      const move = closeOn('2008-02-21') / closeOn('2008-02-01') - 1;
      expect(incremental[0].coverage).toBe(1);
      expect(incremental[0].pnl_base).toBeCloseTo(UNITS * SP500_CLOSES[cut] * move, 6);
    } finally {
      day.cleanup();
    }
  });
});

describe('a recompute over dates with stored stress rows', () => {
  it('writes again the rows of every date it deletes, as the run of that date wrote them', async () => {
    const { day, cut } = await runUpToThenNewDay({
      scenarios: [
        { id: 'autumn-2008', kind: 'historical', from: '2008-09-26', to: '2008-10-10' },
        { id: 'all-down', kind: 'hypothetical', shocks: [{ all: true, return: -0.2 }] },
      ],
    });
    try {
      const read = () => day.db.all(`select * exclude (run_id) from stress_results order by date, scenario_id`);
      const stored = await read();
      expect([...new Set(stored.map((r) => r.date))]).toEqual([SP500_DATES[cut - 1], SP500_DATES[cut]]);
      const { runId } = await runRecompute(day.db, day.config, day.log, { trigger: 'correction', from: SP500_DATES[cut - 5] });
      // the worst windows continue from the stored ones, the sums may run in another order
      expect((await read()).map(rounded)).toEqual(stored.map(rounded));
      expect(await day.db.all(`select distinct run_id from stress_results`)).toEqual([{ run_id: runId }]);
    } finally {
      day.cleanup();
    }
  });
});
