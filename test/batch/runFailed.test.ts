import { readFileSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { runBatch } from '../../src/batch/runBatch.ts';
import { applyViews } from '../../src/storage/sqlFiles.ts';
import { openDatabase } from '../../src/storage/database.ts';
import { runCli } from '../cli/cliProcess.ts';
import { pricesCsv } from '../helpers/files.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';

describe('a run that does not finish is an incident', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  it('a failed recompute raises one run_failed alert through the outbox, and status shows the failure first', async () => {
    ws = await tempWorkspace();
    // a missing view makes the risk stage fail, as a broken migration or disk would
    await ws.db.run('drop macro table ret_portfolios_since');
    const prices = path.join(ws.config.inbox, 'prices_first.csv');
    writeFileSync(prices, pricesCsv(80, 2, '2020-01-01'));
    const batch = await runBatch(ws.db, ws.config, ws.log, [prices]);
    expect(batch.runError).toMatch(/ret_portfolios/);
    ws.db.close(); // as when no worker runs: status reads the primary file

    const delivered = readFileSync(ws.config.alerts.file!, 'utf8').trim().split('\n').map((l) => JSON.parse(l) as Record<string, unknown>);
    expect(delivered.map((a) => [a.alert_id, a.kind])).toEqual([['run-failed-1-open', 'run_failed']]);
    const payload = delivered[0].payload as Record<string, unknown>;
    expect(payload).toMatchObject({ level: 'breach', episode_state: 'open', run_id: 1, trigger: 'ingest:prices_first.csv' });
    expect(payload.error).toMatch(/ret_portfolios/);
    expect(payload.error).not.toMatch(/\n/);

    const table = runCli(['status', '--config', ws.config.configPath]);
    expect(table.status, table.stderr).toBe(0);
    const lines = table.stdout.split('\n');
    expect(lines[0]).toBe('== THE LAST RUN DID NOT FINISH: risk figures are not up to date');
    expect(lines.slice(1, 4).join('\n')).toMatch(/ingest:prices_first\.csv\s+failed/);
    const json = JSON.parse(runCli(['status', '--config', ws.config.configPath, '--format', 'json']).stdout) as Record<string, unknown>;
    expect(Object.keys(json).slice(0, 2)).toEqual(['source', 'lastRunFailed']);
  });

  it('failures that repeat are one episode: one alert when it opens, one when a run finishes again', async () => {
    ws = await tempWorkspace();
    const inbox = (name: string, start: string) => {
      const file = path.join(ws!.config.inbox, name);
      writeFileSync(file, pricesCsv(40, 2, start));
      return file;
    };
    await ws.db.run('drop macro table ret_portfolios_since');
    expect((await runBatch(ws.db, ws.config, ws.log, [inbox('prices_a.csv', '2020-01-01')])).runError).not.toBeNull();
    expect((await runBatch(ws.db, ws.config, ws.log, [inbox('prices_b.csv', '2020-03-01')])).runError).not.toBeNull();
    await applyViews(ws.db, ws.log);
    const fixed = await runBatch(ws.db, ws.config, ws.log, [inbox('prices_c.csv', '2020-05-01')]);
    expect(fixed.runError).toBeNull();
    expect(fixed.run?.alertsRaised).toBe(1);
    const alerts = await ws.db.all<{ alert_id: string; run_id: number; state: string; since: number | null }>(
      `select alert_id, run_id, payload->>'episode_state' as state, (payload->>'failing_since_run')::integer as since
       from alerts where kind = 'run_failed' order by created_at, alert_id`,
    );
    expect(alerts).toEqual([
      { alert_id: 'run-failed-1-open', run_id: 1, state: 'open', since: null },
      { alert_id: 'run-failed-1-closed', run_id: 3, state: 'closed', since: 1 },
    ]);
    // and a run after that closes nothing more
    const calm = await runBatch(ws.db, ws.config, ws.log, [inbox('prices_d.csv', '2020-07-01')]);
    expect(calm.run?.alertsRaised).toBe(0);
  });

  it('a run left running by a process that ended is marked interrupted by the next command, and status says so', async () => {
    ws = await tempWorkspace();
    // what a kill during a run leaves behind: its row, still running
    await ws.db.run(`insert into risk_runs (trigger, status) values ('ingest:prices_killed.csv', 'running')`);
    ws.db.close();
    const next = runCli(['ingest', '--config', ws.config.configPath]);
    expect(next.status, next.stderr).toBe(0);
    const warned = next.stderr.split('\n').filter((l) => l.includes('marked interrupted'));
    expect(warned.map((l) => (JSON.parse(l) as { runIds: number[] }).runIds)).toEqual([[1]]);
    const db = await openDatabase(ws.config.database, { readOnly: true });
    try {
      expect(await db.all('select run_id, status, error from risk_runs')).toEqual([
        { run_id: 1, status: 'interrupted', error: 'the process ended during the run' },
      ]);
    } finally {
      db.close();
    }
    const status = runCli(['status', '--config', ws.config.configPath]);
    expect(status.stdout.split('\n')[0]).toBe('== THE LAST RUN DID NOT FINISH: risk figures are not up to date');
    expect(status.stdout).toMatch(/ingest:prices_killed\.csv\s+interrupted/);
    // told like a failed run: the same run_failed episode, opened by the interrupted run
    const delivered = readFileSync(ws.config.alerts.file!, 'utf8').trim().split('\n').map((l) => JSON.parse(l) as Record<string, unknown>);
    expect(delivered.map((a) => [a.alert_id, a.kind])).toEqual([['run-failed-1-open', 'run_failed']]);
    expect(delivered[0].payload).toMatchObject({
      level: 'breach',
      episode_state: 'open',
      run_id: 1,
      ended: 'interrupted',
      trigger: 'ingest:prices_killed.csv',
      error: 'the process ended during the run',
    });
  });

  it('a second interrupted run continues the open episode instead of opening another', async () => {
    ws = await tempWorkspace();
    await ws.db.run(`insert into risk_runs (trigger, status) values ('ingest:a.csv', 'running'), ('ingest:b.csv', 'running')`);
    const batch = await runBatch(ws.db, ws.config, ws.log, []);
    expect(batch.runError).toBeNull();
    expect(await ws.db.all(`select alert_id from alerts where kind = 'run_failed' order by alert_id`)).toEqual([{ alert_id: 'run-failed-1-open' }]);
  });
});
