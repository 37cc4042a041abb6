import { readFileSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { failingPortfolios } from '../../src/batch/portfolioIncident.ts';
import { runRecompute } from '../../src/batch/runRecompute.ts';
import type { Database } from '../../src/storage/database.ts';
import { openWorkspace } from '../../src/storage/workspace.ts';
import { runCli } from '../cli/cliProcess.ts';
import { pricesCsv } from '../helpers/files.ts';
import type { TempWorkspace } from '../helpers/workspace.ts';
import { deskInInbox } from './isolationDesk.ts';

// The invented desk of isolationDesk.ts: every portfolio is over its (tiny) limit, so
// each computed portfolio raises a limit alert. The fault hook (src/faults.ts) makes computing acct-b throw in the CLI process it is set for.
const FAULT = { RISKFOLD_FAULT_PORTFOLIO: 'acct-b' };

interface AlertRow {
  alert_id: string;
  kind: string;
  portfolio_id: string | null;
  run_id: number;
  state: string;
}

describe('one portfolio whose risk cannot be computed', () => {
  let ws: TempWorkspace | undefined;
  let db: Database | undefined;
  afterEach(() => {
    db?.close();
    db = undefined;
    ws?.cleanup();
  });

  const riskRows = async (d: Database) =>
    d.all<{ portfolio_id: string; n: number; last: string; vol: number; run_id: number }>(
      `select portfolio_id, count(*)::integer as n, max(date)::varchar as last,
              arg_max(vol_ex_ante, date) as vol, max(run_id) as run_id
       from risk_daily where window_days = 63 and estimator = 'sample' group by portfolio_id order by portfolio_id`,
    );
  const runFailedAlerts = (d: Database) =>
    d.all<AlertRow>(
      `select alert_id, kind, portfolio_id, run_id, payload->>'episode_state' as state
       from alerts where kind = 'run_failed' order by created_at, alert_id`,
    );

  it('stops only that portfolio: the others get risk and limit alerts, it gets its own incident until a run computes it again', async () => {
    ws = await deskInInbox();
    const cli = (args: string[], env = {}, status = 0) => {
      const r = runCli([...args, '--config', ws!.config.configPath], 60_000, env);
      expect(r.status, r.stderr).toBe(status);
      return r;
    };
    const strictLine = /^riskfold: --strict: portfolio acct-b not computed \(from 2020-01-01\): 63-day sample estimate: injected fault for portfolio acct-b$/;

    // run 1: the delivery, with acct-b failing
    const ingest = cli(['ingest'], FAULT);
    expect(ingest.stdout).toMatch(/^run 1: 3 portfolios, .*\nportfolio acct-b not computed \(from 2020-01-01\), its figures are those of its last good run: 63-day sample estimate: injected fault for portfolio acct-b$/m);
    const delivered = readFileSync(ws.config.alerts.file!, 'utf8').trim().split('\n').map((l) => JSON.parse(l) as Record<string, unknown>);
    const limitAlerted = new Set(delivered.filter((a) => String(a.kind).startsWith('limit_')).map((a) => a.portfolio_id));
    expect([...limitAlerted].sort()).toEqual(['acct-a', 'acct-c']);
    const incidents = delivered.filter((a) => a.kind === 'run_failed');
    expect(incidents.map((a) => [a.alert_id, a.portfolio_id])).toEqual([['run-failed-1-portfolio-acct-b-open', 'acct-b']]);
    expect(incidents[0].payload).toMatchObject({ level: 'breach', episode_state: 'open', run_id: 1, portfolio_id: 'acct-b', failed_on: '2020-01-01' });
    expect((incidents[0].payload as { error: string }).error).toBe('63-day sample estimate: injected fault for portfolio acct-b');

    // status names it at the top: which portfolio, since which run, which error
    const status = cli(['status']);
    const lines = status.stdout.split('\n');
    expect(lines[0]).toBe('== PORTFOLIOS NOT UPDATED: their risk could not be computed, figures are those of their last good run');
    expect(lines[1].split(/\s{2,}/)).toEqual(['portfolio_id', 'since_run', 'failing_since', 'last_run', 'failed_on', 'error']);
    const row = lines.find((l) => l.startsWith('acct-b'))!.split(/\s{2,}/);
    expect([row[0], row[1], row[3], row[4], row[5]]).toEqual(['acct-b', '1', '1', '2020-01-01', '63-day sample estimate: injected fault for portfolio acct-b']);

    db = await openWorkspace(ws.config, ws.log);
    const first = await riskRows(db);
    expect(first.map((r) => r.portfolio_id)).toEqual(['acct-a', 'acct-c']);
    expect(first.map((r) => [r.n, r.last])).toEqual([
      [70, '2020-03-10'],
      [70, '2020-03-10'],
    ]);
    expect(await db.all(`select run_id, status from risk_runs`)).toEqual([{ run_id: 1, status: 'done' }]);
    // the loss figures leave it out the same way
    const lossPortfolios = await db.all<{ portfolio_id: string }>(
      `select distinct portfolio_id from (select portfolio_id from var_daily union all select portfolio_id from stress_results) order by 1`,
    );
    expect(lossPortfolios.map((r) => r.portfolio_id)).toEqual(['acct-a', 'acct-c']);

    // run 2 computes only acct-a: a good run of another portfolio leaves acct-b's episode open
    await runRecompute(db, ws.config, ws.log, { trigger: 'recompute', portfolios: ['acct-a'] });
    expect((await runFailedAlerts(db)).map((a) => a.alert_id)).toEqual(['run-failed-1-portfolio-acct-b-open']);
    db.close();
    db = undefined;

    // run 3 fails acct-b again: the same episode, no second alert; --strict exits 1 and names it
    const strict = cli(['recompute', '--strict'], FAULT, 1);
    expect(strict.stdout).toMatch(/^portfolio acct-b not computed/m);
    expect(strict.stderr.trim().split('\n').at(-1)).toMatch(strictLine);
    db = await openWorkspace(ws.config, ws.log);
    expect((await runFailedAlerts(db)).map((a) => a.alert_id)).toEqual(['run-failed-1-portfolio-acct-b-open']);
    expect(await db.all(`select run_id, portfolio_id from portfolio_failures order by run_id`)).toEqual([
      { run_id: 1, portfolio_id: 'acct-b' },
      { run_id: 3, portfolio_id: 'acct-b' },
    ]);

    // run 4 computes acct-b: the episode closes, and the others' figures are those a run without any failure gives
    await runRecompute(db, ws.config, ws.log, { trigger: 'recompute' });
    expect(await runFailedAlerts(db)).toEqual([
      { alert_id: 'run-failed-1-portfolio-acct-b-open', kind: 'run_failed', portfolio_id: 'acct-b', run_id: 1, state: 'open' },
      { alert_id: 'run-failed-1-portfolio-acct-b-closed', kind: 'run_failed', portfolio_id: 'acct-b', run_id: 4, state: 'closed' },
    ]);
    const after = await riskRows(db);
    expect(after.map((r) => [r.portfolio_id, r.n, r.run_id])).toEqual([
      ['acct-a', 70, 4],
      ['acct-b', 70, 4],
      ['acct-c', 70, 4],
    ]);
    for (const k of [0, 1]) expect(after[k * 2].vol).toBe(first[k].vol);
    expect(await failingPortfolios(db)).toEqual([]);
    db.close();
    db = undefined;

    // ingest --strict: every file loaded and the run made, then exit 1 naming the portfolio left out
    writeFileSync(path.join(ws.config.inbox, 'prices_2020_more.csv'), pricesCsv(72, 2));
    const strictIngest = cli(['ingest', '--strict'], FAULT, 1);
    expect(strictIngest.stdout).toMatch(/^ingested\s+prices_2020_more\.csv/m);
    expect(strictIngest.stderr.trim().split('\n').at(-1)).toMatch(/^riskfold: --strict: portfolio acct-b not computed \(from [\d-]+\): .*injected fault for portfolio acct-b$/);
  });
});
