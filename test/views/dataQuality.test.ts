import { afterEach, describe, expect, it } from 'vitest';
import { runRecompute } from '../../src/batch/runRecompute.ts';
import { insertFx, insertPositions, insertPrices } from '../helpers/rawRows.ts';
import { defaultsWorkspace, type TempWorkspace } from '../helpers/workspace.ts';

let ws: TempWorkspace;
afterEach(() => ws.cleanup());

interface Problem {
  portfolio_id: string;
  date: string;
  security_id: string | null;
  problem: string;
  reason: string;
}

const problems = (where = 'true') =>
  ws.db.all<Problem>(`select * from check_data_quality where ${where} order by date, problem, security_id`);

const week = ['04', '05', '06', '07', '08'].map((day) => `2024-03-${day}`);

describe('check_data_quality', () => {
  it('flags a price carried within the limit as stale_price and past it as stale_past_limit', async () => {
    ws = await defaultsWorkspace({ risk: { maxStaleDays: 2, windows: [2] } });
    await insertPositions(ws.db, 1, [
      ['2024-03-04', 'acct-growth', 'EQ-NORDWIND', 10],
      ['2024-03-04', 'acct-growth', 'EQ-SALTMARSH', 100],
    ]);
    await insertPrices(ws.db, 2, [['2024-03-04', 'EQ-NORDWIND', 20, null], ...week.map((d) => [d, 'EQ-SALTMARSH', 10, null])]);
    const rows = await problems("problem like 'stale%'");
    expect(rows).toEqual([
      { portfolio_id: 'acct-growth', date: '2024-03-05', security_id: 'EQ-NORDWIND', problem: 'stale_price', reason: 'price carried from 2024-03-04, 1 of at most 2 valuation dates' },
      { portfolio_id: 'acct-growth', date: '2024-03-06', security_id: 'EQ-NORDWIND', problem: 'stale_price', reason: 'price carried from 2024-03-04, 2 of at most 2 valuation dates' },
      {
        portfolio_id: 'acct-growth',
        date: '2024-03-07',
        security_id: 'EQ-NORDWIND',
        problem: 'stale_past_limit',
        reason: 'price last observed on 2024-03-04 is 3 valuation dates old, past the limit of 2: the position has no value',
      },
      {
        portfolio_id: 'acct-growth',
        date: '2024-03-08',
        security_id: 'EQ-NORDWIND',
        problem: 'stale_past_limit',
        reason: 'price last observed on 2024-03-04 is 4 valuation dates old, past the limit of 2: the position has no value',
      },
    ]);
  });

  it('flags a held security without any price and a held currency without a rate', async () => {
    ws = await defaultsWorkspace({ risk: { maxStaleDays: 1, windows: [2] } });
    await insertPositions(ws.db, 1, [
      ['2024-03-04', 'acct-growth', 'EQ-SALTMARSH', 100],
      ['2024-03-04', 'acct-growth', 'BD-KESTREL-28', 5],
      ['2024-03-04', 'acct-growth', 'CASH:EUR', 50],
    ]);
    await insertPrices(ws.db, 2, [['2024-03-04', 'EQ-SALTMARSH', 10, null], ['2024-03-05', 'EQ-SALTMARSH', 10, null], ['2024-03-06', 'EQ-SALTMARSH', 10, null]]);
    await insertFx(ws.db, 3, [['2024-03-04', 'EUR', 1.1]]);
    const rows = await problems("problem in ('no_price', 'missing_fx', 'stale_fx')");
    expect(rows.map((r) => [r.date, r.security_id, r.problem, r.reason])).toEqual([
      ['2024-03-04', 'BD-KESTREL-28', 'no_price', 'BD-KESTREL-28 is held but has no price on or before this date'],
      ['2024-03-05', 'BD-KESTREL-28', 'no_price', 'BD-KESTREL-28 is held but has no price on or before this date'],
      ['2024-03-05', 'CASH:EUR', 'stale_fx', 'EUR rate carried from 2024-03-04, 1 of at most 1 valuation dates'],
      ['2024-03-06', 'CASH:EUR', 'missing_fx', 'EUR rate last observed on 2024-03-04 is 2 valuation dates old, past the limit of 1: the position has no value in USD'],
      ['2024-03-06', 'BD-KESTREL-28', 'no_price', 'BD-KESTREL-28 is held but has no price on or before this date'],
    ]);
  });

  it('flags a held security whose run of returns is shorter than a window, naming the windows it falls short of', async () => {
    ws = await defaultsWorkspace({ risk: { windows: [2, 3], ewma: { seedDays: 2 } } });
    await insertPositions(ws.db, 1, [['2024-03-04', 'acct-growth', 'EQ-SALTMARSH', 100]]);
    // EQ-NORDWIND is priced from Monday but only bought on Thursday
    await insertPositions(ws.db, 2, [
      ['2024-03-07', 'acct-growth', 'EQ-SALTMARSH', 100],
      ['2024-03-07', 'acct-growth', 'EQ-NORDWIND', 10],
    ]);
    await insertPrices(ws.db, 3, [...week.map((d) => [d, 'EQ-SALTMARSH', 10, null]), ...week.map((d) => [d, 'EQ-NORDWIND', 20, null])]);
    const rows = await problems("problem = 'short_history'");
    // returns exist from Tuesday on: Mon 0, Tue 1, Wed 2, Thu 3 (= the window of 3: no problem)
    expect(rows.map((r) => [r.date, r.security_id, r.reason])).toEqual([
      ['2024-03-04', 'EQ-SALTMARSH', '0 consecutive daily returns, short of a full history of 2, 3 days'],
      ['2024-03-05', 'EQ-SALTMARSH', '1 consecutive daily returns, short of a full history of 2, 3 days'],
      ['2024-03-06', 'EQ-SALTMARSH', '2 consecutive daily returns, short of a full history of 3 days'],
    ]);
  });

  it('counts history as the risk rows do: per estimate (the EWMA seed too), cash in another currency by its fx returns', async () => {
    // Before one rule served both, this view counted returns over the longest window only
    // and skipped every cash balance: here it would have flagged EQ-SALTMARSH on Monday
    // and Tuesday only, while the risk rows left CASH:EUR uncovered too, and both of them
    // uncovered by the EWMA (seed 3) on Wednesday.
    ws = await defaultsWorkspace({ risk: { windows: [2], ewma: { seedDays: 3 }, contributions: 'all' } });
    await insertPositions(ws.db, 1, [
      ['2024-03-04', 'acct-growth', 'EQ-SALTMARSH', 100],
      ['2024-03-04', 'acct-growth', 'CASH:EUR', 50],
    ]);
    await insertPrices(ws.db, 2, week.map((d, i) => [d, 'EQ-SALTMARSH', 10 + i, null]));
    await insertFx(ws.db, 3, week.map((d, i) => [d, 'EUR', 1.1 + i / 100]));
    await runRecompute(ws.db, ws.config, ws.log, { trigger: 'test' });

    // by hand: both series have returns from Tuesday on, so runs of 0, 1, 2, 3, 4
    const rows = await problems("problem = 'short_history'");
    expect(rows.map((r) => [r.date, r.security_id, r.reason])).toEqual([
      ['2024-03-04', 'CASH:EUR', '0 consecutive daily returns, short of a full history of 2, 3 days'],
      ['2024-03-04', 'EQ-SALTMARSH', '0 consecutive daily returns, short of a full history of 2, 3 days'],
      ['2024-03-05', 'CASH:EUR', '1 consecutive daily returns, short of a full history of 2, 3 days'],
      ['2024-03-05', 'EQ-SALTMARSH', '1 consecutive daily returns, short of a full history of 2, 3 days'],
      ['2024-03-06', 'CASH:EUR', '2 consecutive daily returns, short of a full history of 3 days'],
      ['2024-03-06', 'EQ-SALTMARSH', '2 consecutive daily returns, short of a full history of 3 days'],
    ]);
    // and the risk rows agree: on each date the estimate with the longest need leaves
    // uncovered exactly the securities flagged here
    const uncovered = await ws.db.all<{ date: string; most: number }>(
      `select date::varchar as date, max(n_holdings - n_covered)::integer as most from risk_daily group by date order by date`,
    );
    const flagged = week.map((d) => rows.filter((r) => r.date === d).length);
    expect(uncovered.map((u) => [u.date, u.most])).toEqual(week.map((d, i) => [d, flagged[i]]));
  });

  it('flags a snapshot whose portfolio value is zero or negative', async () => {
    ws = await defaultsWorkspace({ risk: { windows: [2] } });
    await insertPositions(ws.db, 1, [
      ['2024-03-04', 'acct-hedge', 'EQ-SALTMARSH', 100],
      ['2024-03-04', 'acct-hedge', 'CASH:USD', -1500],
    ]);
    await insertPrices(ws.db, 2, [['2024-03-04', 'EQ-SALTMARSH', 10, null]]);
    expect(await problems("problem = 'nonpositive_value'")).toEqual([
      {
        portfolio_id: 'acct-hedge',
        date: '2024-03-04',
        security_id: null,
        problem: 'nonpositive_value',
        reason: 'portfolio value is -500.0 USD: weights and returns have no meaning',
      },
    ]);
  });

  it('flags a portfolio valued from a snapshot older than checks.positionsMaxAgeDays, and not one whose last snapshot holds nothing', async () => {
    ws = await defaultsWorkspace({ risk: { windows: [2] }, checks: { positionsMaxAgeDays: 2 } });
    await insertPositions(ws.db, 1, [
      ['2024-03-04', 'acct-growth', 'EQ-SALTMARSH', 100],
      ['2024-03-04', 'acct-closed', 'EQ-SALTMARSH', 100],
      ['2024-03-05', 'acct-closed', 'EQ-SALTMARSH', 0],
    ]);
    await insertPrices(ws.db, 2, week.map((d) => [d, 'EQ-SALTMARSH', 10, null]));
    // Monday's snapshot: 2 days old on Wednesday (at the limit), 3 on Thursday (past it)
    expect(await problems("problem = 'positions_stale'")).toEqual(
      ['2024-03-07', '2024-03-08'].map((date, i) => ({
        portfolio_id: 'acct-growth',
        date,
        security_id: null,
        problem: 'positions_stale',
        reason: `holdings from the positions snapshot of 2024-03-04, ${3 + i} days before this date (more than 2): is the portfolio still delivered?`,
      })),
    );
  });

  it('reports nothing once a fully priced portfolio has a full window of returns', async () => {
    ws = await defaultsWorkspace({ risk: { windows: [2], ewma: { seedDays: 2 } } });
    await insertPositions(ws.db, 1, [['2024-03-04', 'acct-growth', 'EQ-SALTMARSH', 100]]);
    await insertPrices(ws.db, 2, week.map((d, i) => [d, 'EQ-SALTMARSH', 10 + i, null]));
    // Monday has no return and Tuesday one: short of 2; from Wednesday on nothing to report
    expect((await problems()).map((r) => [r.date, r.problem])).toEqual([
      ['2024-03-04', 'short_history'],
      ['2024-03-05', 'short_history'],
    ]);
  });
});
