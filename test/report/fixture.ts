import type { Database } from '../../src/storage/database.ts';
import { refreshDerived } from '../../src/storage/derived.ts';
import { businessDays, simulateMarket } from '../../src/demo/market.ts';
import type { ConfigInput } from '../../src/config/schema.ts';

/**
 * A database filled by SQL with plausible rows for one invented portfolio, so the report
 * can be built and checked without the ingest and risk stages. The volatility path is a
 * calm level with a hump that crosses the 63-day limit once.
 */
export const FIXTURE_PORTFOLIO = 'acct-growth';
export const FIXTURE_SECURITIES = ['EQ-BRAMBLEFORD', 'EQ-VELLANCE', 'EQ-NORDWIND', 'BD-KESTREL-28', 'CM-EMBERSTONE'];
export const FIXTURE_DAYS = 320;
export const FIXTURE_LIMIT = 0.18;

export const FIXTURE_CONFIG: Partial<ConfigInput> = {
  risk: { windows: [21, 63, 252], tradingDaysPerYear: 252 },
  limits: [{ portfolio: FIXTURE_PORTFOLIO, window: 63, limit: FIXTURE_LIMIT }],
};

/** The fixture's 63-day ex-ante volatility on day t: 11% calm, a hump to about 23% around day 200. */
export function fixtureVol(t: number, window: number): number {
  const hump = Math.exp(-(((t - 200) / (window / 2 + 12)) ** 2));
  return 0.11 + (window === 21 ? 0.15 : window === 63 ? 0.12 : 0.05) * hump + 0.004 * Math.sin(t / 3);
}

export interface Fixture {
  dates: string[];
  asOf: string;
  breach: { opened_on: string; escalated_on: string; closed_on: string };
}

export async function fillReportFixture(db: Database): Promise<Fixture> {
  const dates = businessDays('2025-01-06', FIXTURE_DAYS);
  const market = simulateMarket({ seed: 99, dates, turbulence: { from: 180, to: 220 } });
  const ids = FIXTURE_SECURITIES;
  const currency = (id: string) => (id === 'EQ-NORDWIND' ? 'EUR' : 'USD');
  await db.run("insert into ingested_files (file_id, name, sha256, kind, rows, status) values (1, 'prices_fixture.csv', 'x', 'prices', 0, 'ingested')");
  const prices = dates.flatMap((d, t) => ids.map((id) => `('${d}', '${id}', ${market.prices.get(id)![t]}, '${currency(id)}', 1, ${t})`));
  await db.run(`insert into prices (date, security_id, price, currency, file_id, line) values ${prices.join(',')}`);
  const fx = dates.map((d, t) => `('${d}', 'EUR', ${market.eurUsd[t]}, 1, ${t})`);
  await db.run(`insert into fx_rates (date, currency, rate, file_id, line) values ${fx.join(',')}`);
  const quantities = [9000, 5000, 20000, 6000, 12000];
  const positions = ids.map((id, i) => `('${dates[0]}', '${FIXTURE_PORTFOLIO}', '${id}', ${quantities[i]}, 1, ${i + 1})`);
  positions.push(`('${dates[0]}', '${FIXTURE_PORTFOLIO}', 'CASH:USD', 150000, 1, 9)`);
  await db.run(`insert into positions (date, portfolio_id, security_id, quantity, file_id, line) values ${positions.join(',')}`);
  await db.run(
    `insert into securities (file_id, line, security_id, name, asset_class, currency) values
     (1, 1, 'EQ-BRAMBLEFORD', 'Brambleford Rail Holdings', 'equity', 'USD'),
     (1, 2, 'EQ-VELLANCE', 'Vellance Semiconductor Works', 'equity', 'USD'),
     (1, 3, 'EQ-NORDWIND', 'Nordwind Turbinenbau', 'equity', 'EUR'),
     (1, 4, 'BD-KESTREL-28', 'Kestrel County 3.1% 2028', 'bond', 'USD'),
     (1, 5, 'CM-EMBERSTONE', 'Emberstone Broad Commodity Fund', 'commodity', 'USD')`,
  );
  await refreshDerived(db); // the views read the derived tables, as after an ingest
  await db.run("insert into risk_runs (run_id, trigger, status, finished_at) values (7, 'ingest:prices_fixture.csv', 'done', now())");

  const risk: string[] = [];
  dates.forEach((d, t) => {
    for (const w of [21, 63, 252]) {
      if (t < w) continue;
      const vol = fixtureVol(t, w);
      risk.push(`('${FIXTURE_PORTFOLIO}', '${d}', ${w}, 'sample', 2.5e6, ${vol}, ${vol * 0.93}, 0.04, ${2.326 * (vol / Math.sqrt(252)) * 2.5e6}, ${2.338 * (vol / Math.sqrt(252)) * 2.5e6}, 1.3, 1, 'ok', 7)`);
    }
    if (t >= 21) risk.push(`('${FIXTURE_PORTFOLIO}', '${d}', 0, 'ewma', 2.5e6, ${fixtureVol(t, 21) * 0.95}, null, null, null, null, 1.3, 1, 'ok', 7)`);
  });
  await db.run(
    `insert into risk_daily (portfolio_id, date, window_days, estimator, portfolio_value, vol_ex_ante, vol_realized, ann_return, var_99_1d, es_975_1d, diversification_ratio, coverage, status, run_id) values ${risk.join(',')}`,
  );
  const asOf = dates[dates.length - 1];
  const pct = [0.34, 0.29, 0.22, -0.02, 0.17];
  const weights = [0.25, 0.24, 0.2, 0.2, 0.06];
  const contributions = ids.map((id, i) => `('${FIXTURE_PORTFOLIO}', '${asOf}', 63, 'sample', '${id}', ${weights[i]}, ${(pct[i] * 0.12) / weights[i]}, ${pct[i] * 0.12}, ${pct[i]}, 7)`);
  await db.run(`insert into risk_contributions (portfolio_id, date, window_days, estimator, security_id, weight, mcr, ccr, pct, run_id) values ${contributions.join(',')}`);

  // the episode the fixture's 63-day path implies: warning 90% and clear 85% of the limit
  const first = (from: number, test: (v: number) => boolean) => dates.findIndex((_, t) => t >= from && t >= 63 && test(fixtureVol(t, 63)));
  const opened = first(0, (v) => v >= 0.9 * FIXTURE_LIMIT);
  const escalated = first(opened, (v) => v >= FIXTURE_LIMIT);
  const closed = first(escalated, (v) => v < 0.85 * FIXTURE_LIMIT);
  const breach = { opened_on: dates[opened], escalated_on: dates[escalated], closed_on: dates[closed] };
  await db.run(
    `insert into limit_breaches (portfolio_id, metric, window_days, estimator, limit_value, warning_value, clear_value, level, opened_on, escalated_on, closed_on, peak_value, peak_on, run_id)
     values ('${FIXTURE_PORTFOLIO}', 'vol_ex_ante', 63, 'sample', ${FIXTURE_LIMIT}, ${0.9 * FIXTURE_LIMIT}, ${0.85 * FIXTURE_LIMIT}, 'breach', '${breach.opened_on}', '${breach.escalated_on}', '${breach.closed_on}', ${fixtureVol(200, 63)}, '${dates[200]}', 7)`,
  );
  await insertVolChange(db, dates, weights);
  await fillLossRows(db, dates);
  return { dates, asOf, breach };
}

/** The 63-day path's daily changes, a small share from the weights; on the last date split over the holdings (adding up). */
async function insertVolChange(db: Database, dates: string[], weights: number[]): Promise<void> {
  const fromWeights = (t: number) => 0.0004 * Math.cos(t / 5);
  const rows = dates.flatMap((d, t) => {
    if (t < 64) return [];
    const prev = fixtureVol(t - 1, 63);
    const now = fixtureVol(t, 63);
    return [`('${FIXTURE_PORTFOLIO}', '${d}', 63, 'sample', '${dates[t - 1]}', ${prev}, ${now}, ${fromWeights(t)}, ${now - prev - fromWeights(t)}, 'ok', 'EQ-VELLANCE', ${fromWeights(t) * 0.6}, 7)`];
  });
  await db.run(
    `insert into vol_change (portfolio_id, date, window_days, estimator, prev_date, vol_prev, vol_now, from_weights, from_market, status,
       weights_driver_security_id, weights_driver_change, run_id) values ${rows.join(',')}`,
  );
  const last = dates.length - 1;
  const shares = [0.1, 0.6, 0.2, -0.05, 0.15];
  const holdings = FIXTURE_SECURITIES.map(
    (id, i) => `('${FIXTURE_PORTFOLIO}', '${dates[last]}', 63, 'sample', '${id}', ${weights[i] - 0.002}, ${weights[i]}, ${shares[i] * fromWeights(last)}, 7)`,
  );
  await db.run(
    `insert into vol_change_securities (portfolio_id, date, window_days, estimator, security_id, weight_prev, weight_now, from_weights, run_id) values ${holdings.join(',')}`,
  );
}

/** Days of the fixture whose loss exceeds the predicted VaR: three exceptions in the chart's range. */
export const FIXTURE_EXCEPTION_DAYS = [230, 251, 290];

/**
 * var_daily, var_backtest and stress_results rows as the loss stage writes them: the
 * normal 63-day VaR of the fixture's path, a loss of a third of it on ordinary days and
 * 1.2 times it on the exception days.
 */
async function fillLossRows(db: Database, dates: string[]): Promise<void> {
  const asOf = dates[dates.length - 1];
  const varOn = (t: number) => 2.326 * (fixtureVol(t, 63) / Math.sqrt(252)) * 2.5e6;
  const methods = [
    `('${FIXTURE_PORTFOLIO}', '${asOf}', 'normal', 63, 'sample', ${varOn(dates.length - 1)}, ${varOn(dates.length - 1) * 1.15}, 1, 'ok', [], 7)`,
    `('${FIXTURE_PORTFOLIO}', '${asOf}', 'historical', 250, null, 61000, 78000, 1, 'ok', [], 7)`,
    `('${FIXTURE_PORTFOLIO}', '${asOf}', 'filtered_historical', 250, null, 52000, 66000, 0.94, 'partial_history', ['CM-EMBERSTONE'], 7)`,
  ];
  await db.run(`insert into var_daily (portfolio_id, date, method, window_days, estimator, var_99_1d, es_975_1d, coverage, status, missing, run_id) values ${methods.join(',')}`);
  const tests: string[] = [];
  let exceptions = 0;
  for (let t = 64; t < dates.length; t++) {
    const exception = FIXTURE_EXCEPTION_DAYS.includes(t);
    if (exception) exceptions++;
    const pnl = -(exception ? 1.2 : (t % 2 === 0 ? 1 : -1) / 3) * varOn(t - 1);
    tests.push(`('${FIXTURE_PORTFOLIO}', '${dates[t]}', 'normal', 63, 'sample', ${varOn(t - 1)}, ${pnl}, ${exception}, ${Math.min(250, t - 63)}, ${exceptions}, 0.5, 0.48, 0.1, 0.75, ${t - 63 >= 250 ? "'green'" : 'null'}, 7)`);
  }
  await db.run(
    `insert into var_backtest (portfolio_id, date, method, window_days, estimator, var_99_1d, pnl, exception, tested_days, exceptions_250,
       kupiec_lr, kupiec_p, christoffersen_lr, christoffersen_p, zone, run_id) values ${tests.join(',')}`,
  );
  await db.run(
    `insert into stress_results (portfolio_id, date, scenario_id, kind, pnl_base, pnl_pct, coverage, missing, range_from, range_to, run_id) values
     ('${FIXTURE_PORTFOLIO}', '${asOf}', 'equities-25', 'hypothetical', -420000, -0.168, 1, [], null, null, 7),
     ('${FIXTURE_PORTFOLIO}', '${asOf}', 'spring-slide', 'historical', -160000, -0.064, 0.94, ['CM-EMBERSTONE'], '${dates[180]}', '${dates[200]}', 7),
     ('${FIXTURE_PORTFOLIO}', '${asOf}', 'worst_1d', 'historical', -61000, -0.0244, 1, [], '${dates[199]}', '${dates[200]}', 7)`,
  );
}
