import * as ss from 'simple-statistics';
import { afterEach, describe, expect, it } from 'vitest';
import { runBatch } from '../../src/batch/runBatch.ts';
import { runCli } from '../cli/cliProcess.ts';
import type { TempWorkspace } from '../helpers/workspace.ts';
import { correction, loadedWorkspace } from './correctionScenario.ts';

// The scenario's prices are daily on every calendar day from 2020-01-01, so a window of 21
// returns ending on date D reads the prices of D - 21 days .. D (22 valuation dates),
// worked by hand; that a window of W returns needs W + 1 prices is common practice, no source.

interface Section {
  total: number;
  rows: Record<string, unknown>[];
}
type Explained = Record<string, Section> & { source: string };

describe('riskfold explain', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  const explain = (...args: string[]) => runCli(['explain', '--config', ws!.config.configPath, '--portfolio', 'acct-harbour', ...args]);
  const explained = (date: string): Explained => {
    const out = explain('--date', date, '--window', '21', '--format', 'json');
    expect(out.status, out.stderr).toBe(0);
    return JSON.parse(out.stdout) as Explained;
  };
  const fileNames = (e: Explained) => e.files.rows.map((r) => [r.kind, r.name]);

  it('prints the figure, its holdings, the files that entered its window and the runs that made and replaced it', async () => {
    ws = await loadedWorkspace();
    expect((await runBatch(ws.db, ws.config, ws.log, [correction(ws)])).runError).toBeNull();
    const [current] = await ws.db.all<{ vol_ex_ante: number; portfolio_value: number }>(
      `select vol_ex_ante, portfolio_value from risk_daily where portfolio_id = 'acct-harbour' and date = '2020-03-31' and window_days = 21`,
    );
    const [earlier] = await ws.db.all<{ vol_ex_ante: number }>(
      `select vol_ex_ante from risk_daily_history where portfolio_id = 'acct-harbour' and date = '2020-03-31' and window_days = 21`,
    );
    // the covariance summary's one pair: the correlation of the two holdings' 21 log returns
    // ending 2020-03-31, checked with simple-statistics' sampleCorrelation
    const prices = await ws.db.all<{ security_id: string; price: number }>(
      `select security_id, price from clean_prices where date between '2020-03-10' and '2020-03-31' order by security_id, date`,
    );
    const logReturns = (id: string) => {
      const p = prices.filter((r) => r.security_id === id).map((r) => r.price);
      return p.slice(1).map((x, i) => Math.log(x / p[i]));
    };
    const [first, second] = [logReturns('EQ-NORDWIND'), logReturns('EQ-SALTMARSH')];
    expect(first).toHaveLength(21);
    const correlation = ss.sampleCorrelation(first, second);
    ws.closeDb();

    // 2020-03-31: the window starts on 2020-03-10, the corrected date
    const last = explained('2020-03-31');
    expect(last.figure.rows).toMatchObject([{ window_days: 21, estimator: 'sample', ...current, status: 'ok', run_id: 2 }]);
    // 100 units near 100 outweigh 50 units near 101
    expect(last.holdings.rows.map((r) => r.security_id)).toEqual(['EQ-NORDWIND', 'EQ-SALTMARSH']);
    expect(last.holdings.rows.every((r) => typeof r.ann_vol_21 === 'number')).toBe(true);
    expect(last.covariance.rows).toMatchObject([{ window_days: 21, pairs: 1 }]);
    expect(Math.abs((last.covariance.rows[0].mean_correlation as number) - correlation)).toBeLessThan(1e-12);
    expect(fileNames(last)).toEqual([
      ['prices', 'prices_first.csv'],
      ['positions', 'positions_first.csv'],
      ['prices', 'prices_fix.csv'],
    ]);
    expect(last.files.rows.every((r) => typeof r.received_at === 'string')).toBe(true);
    expect(last.versions.rows).toMatchObject([
      { vol_ex_ante: earlier.vol_ex_ante, made_by_run: 1, replaced_by_run: 2 },
      { vol_ex_ante: current.vol_ex_ante, made_by_run: 2, replaced_by_run: null, current_until: null },
    ]);

    // 2020-04-01: the window starts on 2020-03-11; the correction no longer enters it
    expect(fileNames(explained('2020-04-01'))).toEqual([
      ['prices', 'prices_first.csv'],
      ['positions', 'positions_first.csv'],
    ]);
  });

  it('says in one line when there is no such figure', async () => {
    ws = await loadedWorkspace();
    ws.closeDb();
    const missing = explain('--date', '2019-06-03');
    expect(missing.status).not.toBe(0);
    expect(missing.stderr.trim()).toMatch(/no figure of acct-harbour on 2019-06-03 in risk_daily/);
    const bad = explain('--date', '2020-02-30');
    expect(bad.stderr.trim()).toMatch(/date "2020-02-30" is not an ISO date/);
  });
});
