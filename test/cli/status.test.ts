import { writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { runBatch } from '../../src/batch/runBatch.ts';
import { localDate, previousBusinessDay } from '../../src/schedule/calendar.ts';
import { pricesCsv, writeCsv } from '../helpers/files.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';
import { runCli } from './cliProcess.ts';

// An invented desk: two portfolios on the same two securities; acct-tight has a mandate
// limit its volatility exceeds, acct-wide the desk-wide 15%. fx (a currency nobody
// holds) is delivered for the last business day, prices only up to 2020. The webhook
// refuses every connection, so the limit alert stays in the outbox.
const LIMITS = [
  { portfolio: '*', window: 63, limit: 0.15 },
  { portfolio: 'acct-tight', window: 63, limit: 0.005 },
];

type Cli = (...args: string[]) => ReturnType<typeof runCli>;

// every test only reads: one loaded workspace serves them all
describe('riskfold status and sql with no worker running', () => {
  let ws: TempWorkspace | undefined;
  let loadedDesk: { expectedFor: string; cli: Cli };
  beforeAll(async () => {
    loadedDesk = await load();
  });
  afterAll(() => ws?.cleanup());
  const loaded = () => loadedDesk;

  async function load(): Promise<{ expectedFor: string; cli: Cli }> {
    const w = (ws = await tempWorkspace({
      limits: LIMITS,
      schedule: { missingData: { expect: ['prices', 'fx'] } },
      alerts: { file: 'alerts.jsonl', webhook: { url: 'http://127.0.0.1:9/hook', maxAttempts: 1 } },
    }));
    // the day the status judges deliveries against, computed as the status does at this instant
    const expectedFor = previousBusinessDay(localDate(new Date(), 'UTC'));
    writeFileSync(path.join(w.config.inbox, 'prices_2020.csv'), pricesCsv(70, 2));
    writeCsv(w.config.inbox, 'positions_2020.csv', [
      ['date', 'portfolio_id', 'security_id', 'quantity'],
      ['2020-01-01', 'acct-tight', 'EQ-NORDWIND', 100],
      ['2020-01-01', 'acct-tight', 'EQ-SALTMARSH', 50],
      ['2020-01-01', 'acct-wide', 'EQ-NORDWIND', 1000],
      ['2020-01-01', 'acct-wide', 'CASH:USD', 5000],
    ]);
    writeCsv(w.config.inbox, 'fx_latest.csv', [['date', 'currency', 'rate'], [expectedFor, 'EUR', 1.1]]);
    writeCsv(w.config.inbox, 'positions_bad.csv', [['date', 'portfolio_id', 'security_id'], ['2020-01-01', 'acct-wide', 'EQ-NORDWIND']]);
    await runBatch(w.db, w.config, w.log, ['prices_2020.csv', 'positions_2020.csv', 'fx_latest.csv', 'positions_bad.csv'].map((f) => path.join(w.config.inbox, f)));
    // an open episode of a backtest zone (historical VaR, 7 exceptions: yellow), as the limit check records one
    await w.db.run(`insert into limit_breaches (portfolio_id, metric, method, window_days, estimator, limit_value, warning_value, clear_value,
        level, opened_on, peak_value, peak_on, run_id)
      values ('acct-wide', 'backtest_zone', 'historical', 250, null, 10, 5, 4.5, 'warning', '2020-03-02', 7, '2020-03-04', 1)`);
    w.closeDb(); // free the primary file, as when no worker runs
    // the same reading twice gives the same answer: spawn each command line once
    const seen = new Map<string, ReturnType<typeof runCli>>();
    const cli: Cli = (...args) => {
      const key = JSON.stringify(args);
      if (!seen.has(key)) seen.set(key, runCli([...args, '--config', w.config.configPath]));
      return seen.get(key)!;
    };
    return { expectedFor, cli };
  }

  function latestFigures(cli: Cli): Record<string, { vol: number; value: number; date: string }> {
    const r = cli('sql', `select portfolio_id, date, vol_ex_ante as vol, portfolio_value as value from risk_daily
      where window_days = 63 and estimator = 'sample' qualify row_number() over (partition by portfolio_id order by date desc) = 1`, '--format', 'json');
    const rows = JSON.parse(r.stdout) as { portfolio_id: string; vol: number; value: number; date: string }[];
    return Object.fromEntries(rows.map((row) => [row.portfolio_id, row]));
  }

  it('opens with one row per portfolio and watched figure: value, the figure against its limit, headroom, episode, coverage (percentages)', () => {
    const { cli } = loaded();
    const figures = latestFigures(cli);
    const details = JSON.parse(cli('status', '--details', '--format', 'json').stdout) as { openBreaches: { rows: Record<string, string>[] } };
    const breach = details.openBreaches.rows.find((r) => r.portfolio_id === 'acct-tight')!;
    expect(breach.portfolio_id).toBe('acct-tight');
    const r = cli('status');
    expect(r.status).toBe(0);
    expect(r.stderr).toBe(''); // the primary file was free: no read-copy note
    expect(r.stdout.startsWith('== portfolios\n')).toBe(true);
    const pct = (x: number) => `${(x * 100).toFixed(2)}%`;
    const tight = r.stdout.split('\n').find((l) => l.startsWith('acct-tight'))!.split(/\s{2,}/);
    // headroom = limit - figure (common practice, no source); breach dated from its escalation
    expect(tight).toEqual([
      'acct-tight',
      figures['acct-tight'].date,
      figures['acct-tight'].value.toLocaleString('en-US', { minimumFractionDigits: 2, maximumFractionDigits: 2 }),
      'vol_ex_ante_63d',
      pct(figures['acct-tight'].vol),
      '0.50%',
      pct(0.005 - figures['acct-tight'].vol),
      'breach',
      breach.escalated_on ?? breach.opened_on,
      '100.00%',
      'ok',
    ]);
    expect(breach.level).toBe('breach');
    const wide = r.stdout.split('\n').find((l) => l.startsWith('acct-wide'))!.split(/\s{2,}/);
    expect(wide.slice(3, 8)).toEqual(['vol_ex_ante_63d', pct(figures['acct-wide'].vol), '15.00%', pct(0.15 - figures['acct-wide'].vol), 'clear']);
  });

  it('says per file kind whether the last business day arrived, and counts alerts and problems by kind', () => {
    const { cli, expectedFor } = loaded();
    const csv = cli('status', '--format', 'csv').stdout;
    const files = csv.split('\n# ')[1].split('\n');
    expect(files.slice(0, 6)).toEqual([
      'files by kind',
      'kind,latest_date,last_received_at,expected_for,arrived',
      expect.stringMatching(new RegExp(`^prices,2020-03-10,[0-9: -]+,${expectedFor},false$`)),
      expect.stringMatching(/^positions,2020-01-01,[0-9: -]+,,$/), // not expected by this config
      expect.stringMatching(new RegExp(`^fx,${expectedFor},[0-9: -]+,${expectedFor},true$`)),
      'securities,,,,',
    ]);
    // the batch did not deliver: the alert on the fixture's rejected file and the limit alert
    // (a history load: the state, not a late opening) wait in the outbox
    expect(csv).toMatch(
      /# undelivered alerts by kind\nkind,alerts,oldest_as_of,most_attempts,latest_error\nfile_rejected,1,,1,webhook: .+\nlimit_state,1,2020-03-10,1,webhook: .+\n/,
    );
  });

  it('keeps full precision in csv and json', () => {
    const { cli } = loaded();
    const figures = latestFigures(cli);
    const body = JSON.parse(cli('status', '--format', 'json').stdout) as { portfolios: { rows: Record<string, unknown>[] } };
    const tight = body.portfolios.rows.find((r) => r.portfolio_id === 'acct-tight' && r.watching === 'vol_ex_ante_63d')!;
    expect(tight.figure).toBe(figures['acct-tight'].vol);
    expect(tight.headroom).toBe(0.005 - figures['acct-tight'].vol);
    expect(tight.value_base).toBe(figures['acct-tight'].value);
    expect(cli('status', '--format', 'csv').stdout).toContain(`acct-tight,${figures['acct-tight'].date},${figures['acct-tight'].value},vol_ex_ante_63d,${figures['acct-tight'].vol},0.005,`);
  });

  it('--portfolio narrows every section; an unknown id exits non-zero with one line', () => {
    const { cli } = loaded();
    const body = JSON.parse(cli('status', '--format', 'json', '--portfolio', 'acct-wide').stdout) as Record<string, { total: number; rows: Record<string, unknown>[] }>;
    expect(body.portfolios.rows.map((r) => r.portfolio_id)).toEqual(['acct-wide']);
    expect(body.alerts.total).toBe(0); // the only alert is acct-tight's
    const bad = cli('status', '--portfolio', 'acct-nosuch');
    expect(bad.status).not.toBe(0);
    expect(bad.stderr).toBe('riskfold: no portfolio "acct-nosuch" in the positions received (known: acct-tight, acct-wide)\n');
  });

  it('--details adds the rows behind the summaries', () => {
    const { cli } = loaded();
    const plain = cli('status').stdout;
    expect(plain).not.toContain('== last files');
    // the open episode's limit and peak as percentages, like the portfolio table
    const breachLines = cli('status', '--details').stdout.split('== open breaches\n')[1].split('\n');
    const breachLine = breachLines.find((l) => l.includes('acct-tight'));
    expect(breachLine).toMatch(/acct-tight\s+vol_ex_ante\s+63\s+sample\s+breach\s+0\.50%\s+[\d-]+\s+([\d-]+\s+)?\d+\.\d\d%/);
    // a backtest zone's limit and peak count exceptions: 10 and 7, not 1000.00% and 700.00%
    const zoneLine = breachLines.find((l) => l.includes('backtest_zone'));
    expect(zoneLine).toMatch(/acct-wide\s+backtest_zone\s+historical\s+250\s+warning\s+10\s+2020-03-02\s+7\s+2020-03-04$/);
    const body = JSON.parse(cli('status', '--details', '--format', 'json').stdout) as Record<string, { rows: Record<string, unknown>[] }>;
    expect(body.lastFiles.rows.find((f) => f.name === 'positions_bad.csv')).toMatchObject({ kind: 'positions', status: 'rejected' });
    expect(Object.keys(body)).toEqual([
      'source', 'portfolios', 'files', 'lastRun', 'alerts', 'fileProblems', 'dataProblems',
      'lastFiles', 'openBreaches', 'undeliveredAlerts', 'fileProblemRows', 'dataProblemRows',
    ]);
  });

  it('sql --format table rounds doubles for reading; csv keeps them whole; a bad format is one line and exit 2', () => {
    const { cli } = loaded();
    const query = "select portfolio_id, vol_ex_ante from risk_daily where portfolio_id = 'acct-wide' and window_days = 63 order by date desc limit 1";
    const vol = latestFigures(cli)['acct-wide'].vol;
    expect(cli('sql', query).stdout).toBe(`portfolio_id  vol_ex_ante\n------------  -----------\nacct-wide     ${String(Number(vol.toPrecision(6))).padStart(11)}\n(1 row)\n`);
    expect(cli('sql', query, '--format', 'csv').stdout).toBe(`portfolio_id,vol_ex_ante\nacct-wide,${vol}\n`);
    const bad = cli('sql', 'select 1', '--format', 'xml');
    expect(bad.status).toBe(2);
    expect(bad.stderr).toBe('riskfold: --format must be one of table, csv, json, got "xml"\n');
  });
});
