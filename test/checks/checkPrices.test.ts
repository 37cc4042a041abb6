import { afterEach, describe, expect, it } from 'vitest';
import { runBatch } from '../../src/batch/runBatch.ts';
import type { ConfigInput } from '../../src/config/schema.ts';
import { writeCsv } from '../helpers/files.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';
import { SP500_CLOSES, SP500_DATES } from '../risk/math/data/sp500Closes2008.ts';

/**
 * The suspect-price check through the whole pipeline, on a real open series: the S&P 500
 * closes of 2008 (vega-datasets 3.2.1, data/sp500-2000.csv; see the data file), delivered
 * as the price of one invented holding. The portfolio and its second holding are invented.
 */
const SLIP_DAY = SP500_DATES.indexOf('2008-10-14');
const HISTORY = SP500_DATES.slice(0, SLIP_DAY).map((date, i) => [date, 'EQ-BROAD', SP500_CLOSES[i]] as (string | number)[]);

describe('checkPrices in the pipeline', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  async function deliver(name: string, rows: (string | number)[][]) {
    const { db, config, log } = ws!;
    const file = writeCsv(config.inbox, name, rows);
    const summary = await runBatch(db, config, log, [file]);
    expect(summary.runError).toBeNull();
  }
  const prices = (rows: (string | number)[][]) => [['date', 'security_id', 'price'], ...rows];
  const alerts = () => ws!.db.all<{ alert_id: string; level: string; text: string }>(
    "select alert_id, payload->>'level' as level, payload->>'text' as text from alerts where kind = 'price_suspect' order by created_at, alert_id",
  );
  const statusOn = (date: string) =>
    ws!.db.all<{ window_days: number; status: string }>(
      "select window_days, status from risk_daily where portfolio_id = 'acct-broad' and date = $1::date and estimator = 'sample' order by window_days",
      [date],
    );

  const varStatusOn = (date: string) =>
    ws!.db.all<{ method: string; window_days: number; status: string }>(
      "select method, window_days, status from var_daily where portfolio_id = 'acct-broad' and date = $1::date order by method, window_days",
      [date],
    );

  async function loaded(mode: 'flag' | 'hold', limits: ConfigInput['limits'] = []) {
    // 100 scenarios: the historical VaR has figures by October
    ws = await tempWorkspace({ risk: { windows: [21], tradingDaysPerYear: 252, historical: { days: [100] } }, limits, checks: { suspectPrices: { mode } } });
    await deliver('positions_2008.csv', [['date', 'portfolio_id', 'security_id', 'quantity'], ['2008-01-04', 'acct-broad', 'EQ-BROAD', 100], ['2008-01-04', 'acct-broad', 'CASH:USD', 50_000]]);
    await deliver('prices_2008.csv', prices(HISTORY));
    // the whole of 2008 up to the slip, the crash of October included, raises nothing
    expect(await ws!.db.all('select * from price_checks')).toEqual([]);
    expect(await alerts()).toEqual([]);
  }

  it('flags a 10x price (flag mode: used, flagged in data quality and risk status, alerted), then clears it on a correction', async () => {
    await loaded('flag');
    const slip = SP500_CLOSES[SLIP_DAY] * 10;
    await deliver('prices_20081014.csv', prices([[SP500_DATES[SLIP_DAY], 'EQ-BROAD', slip]]));

    const [flag] = await ws!.db.all<{ rules: string; held: boolean; cleared_at: string | null }>('select rules, held, cleared_at from price_checks');
    expect(flag).toEqual({ rules: 'jump,power_of_ten', held: false, cleared_at: null });
    const problems = await ws!.db.all<{ security_id: string; reason: string }>(
      "select security_id, reason from check_data_quality where problem = 'suspect_price'",
    );
    expect(problems.map((p) => p.security_id)).toEqual(['EQ-BROAD']);
    expect(problems[0].reason).toMatch(/close to 10: a unit or decimal-separator slip\?; used in risk$/);
    expect((await statusOn('2008-10-14')).map((r) => r.status)).toEqual(['suspect_price']);
    // every VaR method revalues the holding under a return from the flagged price
    expect(await varStatusOn('2008-10-14')).toEqual([
      { method: 'filtered_historical', window_days: 100, status: 'suspect_price' },
      { method: 'historical', window_days: 100, status: 'suspect_price' },
      { method: 'normal', window_days: 0, status: 'suspect_price' },
      { method: 'normal', window_days: 21, status: 'suspect_price' },
    ]);
    expect((await varStatusOn(SP500_DATES[SLIP_DAY - 1])).map((r) => r.status)).toEqual(['ok', 'ok', 'ok', 'ok']);
    expect((await alerts()).map((a) => a.level)).toEqual(['suspect']);

    // the custodian corrects the price: the flag clears, once, and so does the status
    await deliver('prices_20081014_fix.csv', prices([[SP500_DATES[SLIP_DAY], 'EQ-BROAD', SP500_CLOSES[SLIP_DAY]]]));
    const after = await alerts();
    expect(after.map((a) => a.level)).toEqual(['suspect', 'cleared']);
    expect(after[1].text).toBe(`EQ-BROAD: the suspect price ${slip} on 2008-10-14 is cleared: corrected to ${SP500_CLOSES[SLIP_DAY]}`);
    expect((await statusOn('2008-10-14')).map((r) => r.status)).toEqual(['ok']);
    expect((await varStatusOn('2008-10-14')).map((r) => r.status)).toEqual(['ok', 'ok', 'ok', 'ok']);
  });

  it('names the suspect price in the breach alert a flagged price sets off (flag mode), and withdraws the episode on the correction', async () => {
    // 2008's 21-day volatility of the index stays under 100%; a 10x price sends it far above
    await loaded('flag', [{ portfolio: 'acct-broad', window: 21, limit: 1 }]);
    const slip = SP500_CLOSES[SLIP_DAY] * 10;
    await deliver('prices_20081014.csv', prices([[SP500_DATES[SLIP_DAY], 'EQ-BROAD', slip]]));
    const limitAlerts = () =>
      ws!.db.all<{ kind: string; text: string; suspects: string }>(
        "select kind, payload->>'text' as text, payload->>'suspect_prices' as suspects from alerts where kind like 'limit_%' order by created_at, alert_id",
      );
    const [opened] = await limitAlerts();
    expect(opened.kind).toBe('limit_opened');
    expect(opened.text).toContain(
      `reached its 100.0% limit on 2008-10-14 (computed with a suspect price, not yet confirmed or corrected: EQ-BROAD ${slip} on 2008-10-14, rules jump, power_of_ten; check the data before acting)`,
    );
    expect(JSON.parse(opened.suspects)).toEqual([{ security_id: 'EQ-BROAD', date: '2008-10-14', price: slip, rules: 'jump,power_of_ten' }]);
    await deliver('prices_20081014_fix.csv', prices([[SP500_DATES[SLIP_DAY], 'EQ-BROAD', SP500_CLOSES[SLIP_DAY]]]));
    expect((await limitAlerts()).map((a) => a.kind)).toEqual(['limit_opened', 'limit_retracted']);
  });

  it('checks the prices of a benchmark constituent nobody holds, and marks the status of the portfolios measured against it', async () => {
    ws = await tempWorkspace({ risk: { windows: [21], tradingDaysPerYear: 252 }, limits: [], benchmarks: { 'acct-broad': 'bm-broad' } });
    await deliver('positions_2008.csv', [['date', 'portfolio_id', 'security_id', 'quantity'], ['2008-01-04', 'acct-broad', 'EQ-BROAD', 100]]);
    await deliver('benchmarks_2008.csv', [['date', 'benchmark_id', 'security_id', 'weight'], ['2008-01-04', 'bm-broad', 'EQ-TRACKED', 1]]);
    await deliver('prices_2008.csv', prices(HISTORY.flatMap(([date, , close]) => [[date, 'EQ-BROAD', close], [date, 'EQ-TRACKED', close]])));
    expect(await ws.db.all('select * from price_checks')).toEqual([]);
    await deliver('prices_20081014.csv', prices([[SP500_DATES[SLIP_DAY], 'EQ-BROAD', SP500_CLOSES[SLIP_DAY]], [SP500_DATES[SLIP_DAY], 'EQ-TRACKED', SP500_CLOSES[SLIP_DAY] * 10]]));
    expect(await ws.db.all('select security_id, rules from price_checks')).toEqual([{ security_id: 'EQ-TRACKED', rules: 'jump,power_of_ten' }]);
    // the tracking error reads EQ-TRACKED's price, so acct-broad's figures of that date are suspect too
    expect(await statusOn('2008-10-14')).toEqual([{ window_days: 21, status: 'suspect_price' }]);
    expect(await statusOn(SP500_DATES[SLIP_DAY - 1])).toEqual([{ window_days: 21, status: 'ok' }]);
  });

  it('holds a decimal-separator slip out of risk (hold mode: previous price carried, stale) until a repeated delivery confirms it', async () => {
    await loaded('hold');
    // 1.066,10 read for 66,10: the price 16 times too high
    const slip = Number((SP500_CLOSES[SLIP_DAY] * (1066.1 / 66.1)).toFixed(2));
    await deliver('prices_20081014.csv', prices([[SP500_DATES[SLIP_DAY], 'EQ-BROAD', slip]]));
    const price = () =>
      ws!.db.all<{ price_local: number; price_status: string }>(
        "select price_local, price_status from value_positions where security_id = 'EQ-BROAD' and date = '2008-10-14'",
      );
    expect(await price()).toEqual([{ price_local: SP500_CLOSES[SLIP_DAY - 1], price_status: 'stale' }]);
    expect((await statusOn('2008-10-14')).map((r) => r.status)).toEqual(['stale_prices']);
    expect((await alerts())[0].text).toMatch(/held out of risk: the previous price is carried forward as stale until a later delivery repeats or corrects it$/);

    // the same value again, written with two decimals (identical bytes would be a duplicate file, not a repeat)
    await deliver('prices_20081014_again.csv', prices([[SP500_DATES[SLIP_DAY], 'EQ-BROAD', slip.toFixed(2)]]));
    expect(await price()).toEqual([{ price_local: slip, price_status: 'ok' }]);
    expect((await alerts()).map((a) => [a.level, a.text.split(': ').pop()])).toEqual([
      ['suspect', expect.any(String)],
      ['cleared', 'confirmed by a repeated delivery'],
    ]);
  });
});
