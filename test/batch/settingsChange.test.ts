import { readFileSync, writeFileSync } from 'node:fs';
import { afterEach, describe, expect, it } from 'vitest';
import { describeChange } from '../../src/batch/runSettings.ts';
import { loadConfig } from '../../src/config/load.ts';
import { memoryLogger } from '../../src/log/logger.ts';
import { openDatabase } from '../../src/storage/database.ts';
import { startWorker } from '../../src/worker/startWorker.ts';
import { runCli } from '../cli/cliProcess.ts';
import { writeTwoHoldings } from '../helpers/files.ts';
import { waitFor } from '../helpers/wait.ts';
import { workerDir, type WorkerDir } from '../helpers/workspace.ts';

interface LastRun {
  from_date: string | null;
  portfolios: string[] | null;
  lambda: number;
  windows: string;
  rows_of_other_runs: number;
  ewma_state_lambda: number | null;
}

describe('a setting that shapes results changes between runs', () => {
  let wd: WorkerDir | undefined;
  afterEach(() => wd?.cleanup());

  /** Two securities over 80 days held by one account, loaded and computed by the ingest command. */
  function ingested(): WorkerDir {
    const w = workerDir();
    writeTwoHoldings(w.config.inbox, { days: 80 });
    const first = runCli(['ingest', '--config', w.configPath]);
    expect(first.status, first.stderr).toBe(0);
    expect(first.stdout).not.toMatch(/setting/);
    return w;
  }

  function editConfig(w: WorkerDir, edit: (risk: Record<string, unknown>, raw: Record<string, unknown>) => void): void {
    const raw = JSON.parse(readFileSync(w.configPath, 'utf8')) as { risk: Record<string, unknown> };
    edit(raw.risk, raw);
    writeFileSync(w.configPath, `${JSON.stringify(raw, null, 2)}\n`);
  }

  async function lastRun(w: WorkerDir): Promise<LastRun> {
    const db = await openDatabase(w.config.database, { readOnly: true });
    try {
      const [row] = await db.all<LastRun>(`
        with last as (select * from risk_runs where status = 'done' order by run_id desc limit 1)
        select from_date, portfolios,
               (settings->>'$."risk.ewma.lambda"')::double as lambda,
               (settings->'$."risk.windows"')::varchar as windows,
               (select count(*)::integer from risk_daily d where d.run_id <> last.run_id) as rows_of_other_runs,
               (select max(settings->>'$."risk.ewma.lambda"')::double from risk_ewma_state) as ewma_state_lambda
        from last`);
      return row;
    } finally {
      db.close();
    }
  }

  it('recompute --from names the setting in one line and a warn record, and recomputes the full history instead', async () => {
    wd = ingested();
    editConfig(wd, (risk) => (risk.ewma = { lambda: 0.97 }));
    const changed = runCli(['recompute', '--config', wd.configPath, '--from', '2020-03-10', '--portfolio', 'acct-growth']);
    expect(changed.status, changed.stderr).toBe(0);
    expect(changed.stdout.split('\n')[0]).toBe('setting risk.ewma.lambda changed 0.94 -> 0.97: recomputing full history');
    const warned = changed.stderr
      .split('\n')
      .filter((l) => l.startsWith('{'))
      .map((l) => JSON.parse(l) as Record<string, unknown>)
      .filter((r) => r.level === 40 && r.setting !== undefined);
    expect(warned.map((r) => [r.setting, r.before, r.after])).toEqual([['risk.ewma.lambda', 0.94, 0.97]]);
    // widened: every date, every portfolio; no row of the old lambda is left beside the new ones
    expect(await lastRun(wd)).toMatchObject({ from_date: null, portfolios: null, lambda: 0.97, rows_of_other_runs: 0, ewma_state_lambda: 0.97 });

    // unchanged settings: the run keeps the scope it was asked for
    const again = runCli(['recompute', '--config', wd.configPath, '--from', '2020-03-10', '--portfolio', 'acct-growth']);
    expect(again.status, again.stderr).toBe(0);
    expect(again.stdout).not.toMatch(/setting/);
    expect(await lastRun(wd)).toMatchObject({ from_date: '2020-03-10', portfolios: ['acct-growth'], lambda: 0.97 });
  });

  it('a changed limit is named like any other setting, and its episodes are replayed over the full history', async () => {
    wd = ingested();
    const breaches = async () => {
      const db = await openDatabase(wd!.config.database, { readOnly: true });
      try {
        return await db.all<{ limit_value: number; n: number }>('select limit_value, count(*)::integer as n from limit_breaches group by limit_value');
      } finally {
        db.close();
      }
    };
    // the prices move about 0.1% a day: the configured 15% is never reached
    expect(await breaches()).toEqual([]);
    editConfig(wd, (_risk, raw) => (raw.limits = [{ portfolio: '*', window: 63, limit: 0.001, warning: 0.0009, clear: 0.0008 }]));
    const changed = runCli(['recompute', '--config', wd.configPath, '--from', '2020-03-10', '--portfolio', 'acct-growth']);
    expect(changed.status, changed.stderr).toBe(0);
    expect(changed.stdout.split('\n')[0]).toBe(
      'setting limits changed *|vol_ex_ante||63|sample=0.15/0.135/0.1275 -> *|vol_ex_ante||63|sample=0.001/0.0009/0.0008: recomputing full history',
    );
    expect(await lastRun(wd)).toMatchObject({ from_date: null, portfolios: null, rows_of_other_runs: 0 });
    // every episode is judged against the new levels, from the first date with a 63-day figure
    const after = await breaches();
    expect(after.map((b) => b.limit_value)).toEqual([0.001]);
    expect(after[0].n).toBeGreaterThan(0);
  });

  it('the worker, started on an empty inbox after a change of windows, recomputes everything and says so', async () => {
    wd = ingested();
    editConfig(wd, (risk) => (risk.windows = [21, 63]));
    const { log, lines } = memoryLogger();
    const worker = await startWorker(loadConfig(wd.configPath), log);
    try {
      await waitFor(() => lines().find((l) => l.msg === 'batch done'), 20_000, 'the catch-up batch');
    } finally {
      await worker.stop();
    }
    expect(lines().filter((l) => l.setting !== undefined).map((l) => l.msg)).toEqual([
      'setting risk.windows changed 63 -> 21,63: recomputing full history',
    ]);
    expect(await lastRun(wd)).toMatchObject({ from_date: null, portfolios: null, windows: '[21,63]', rows_of_other_runs: 0 });
  });
});

describe('describeChange', () => {
  it('shows numbers without float noise: a default warning level of 0.9 x 0.1 reads 0.09, a computed lambda 0.91', () => {
    // 0.9 * 0.1 is 0.09000000000000001 in IEEE 754 doubles (common practice, no source)
    const limits = (limit: number) => [`acct-a|vol_ex_ante||63|sample=${limit}/${0.9 * limit}/${0.85 * limit}`];
    expect(describeChange({ setting: 'limits', before: limits(0.15), after: limits(0.1) })).toBe(
      'setting limits changed acct-a|vol_ex_ante||63|sample=0.15/0.135/0.1275 -> acct-a|vol_ex_ante||63|sample=0.1/0.09/0.085: recomputing full history',
    );
    expect(describeChange({ setting: 'risk.ewma.lambda', before: 0.94, after: 0.7 * 1.3 })).toBe('setting risk.ewma.lambda changed 0.94 -> 0.91: recomputing full history');
    expect(describeChange({ setting: 'risk.windows', before: undefined, after: [21, 63] })).toBe('setting risk.windows changed (not recorded) -> 21,63: recomputing full history');
  });
});
