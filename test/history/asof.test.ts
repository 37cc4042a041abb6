import { writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { runBatch } from '../../src/batch/runBatch.ts';
import { runRecompute } from '../../src/batch/runRecompute.ts';
import { RUN_WRITERS, type RunWriter } from '../../src/batch/runWriters.ts';
import { openDatabase } from '../../src/storage/database.ts';
import { runCli, startCli } from '../cli/cliProcess.ts';
import { pricesCsv, writeCsv } from '../helpers/files.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';

// Invented data; what is checked is the bookkeeping of system time (a row is current from
// the run that wrote it until the run that replaced it), common practice for
// transaction-time tables, no source.

const KEPT = ['risk_daily', 'risk_contributions', 'limit_breaches'] as const;
const ORDER: Record<(typeof KEPT)[number], string> = {
  risk_daily: 'portfolio_id, date, window_days, estimator',
  risk_contributions: 'portfolio_id, date, window_days, estimator, security_id',
  limit_breaches: 'breach_id',
};

describe('results as known at a past system time', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  async function loadHistoryAndCorrect(): Promise<void> {
    // a low limit, so the first load opens an episode that the correction then changes
    ws = await tempWorkspace({ risk: { windows: [21], tradingDaysPerYear: 252 }, limits: [{ portfolio: '*', window: 21, limit: 0.01 }] });
    const prices = path.join(ws.config.inbox, 'prices_first.csv');
    writeFileSync(prices, pricesCsv(90, 2, '2020-01-01'));
    const positions = writeCsv(ws.config.inbox, 'positions_first.csv', [
      ['date', 'portfolio_id', 'security_id', 'quantity'],
      ['2020-01-01', 'acct-harbour', 'EQ-NORDWIND', 100],
      ['2020-01-01', 'acct-harbour', 'EQ-SALTMARSH', 50],
    ]);
    expect((await runBatch(ws.db, ws.config, ws.log, [prices, positions])).runError).toBeNull();
  }

  const correction = () =>
    writeCsv(ws!.config.inbox, 'prices_fix.csv', [
      ['date', 'security_id', 'price'],
      ['2020-03-10', 'EQ-NORDWIND', 112.5],
    ]);

  const table = (t: string, from: string) => ws!.db.all(`select * from ${from} order by ${ORDER[t as (typeof KEPT)[number]]}`);
  const finishedAt = async (runId: number) =>
    (await ws!.db.all<{ ts: string }>('select finished_at::varchar as ts from risk_runs where run_id = $1', [runId]))[0].ts;

  it('after a correction, <table>_asof before it returns the earlier rows exactly, and at now the current ones', async () => {
    await loadHistoryAndCorrect();
    const before = Object.fromEntries(await Promise.all(KEPT.map(async (t) => [t, await table(t, t)])));
    expect(before.limit_breaches.length).toBeGreaterThan(0);
    const firstDone = await finishedAt(1);
    expect((await runBatch(ws!.db, ws!.config, ws!.log, [correction()])).runError).toBeNull();

    for (const t of KEPT) {
      const now = await table(t, t);
      expect(now, `${t} changed by the correction`).not.toEqual(before[t]);
      expect(await table(t, `${t}_asof('${firstDone}')`), `${t} as known after the first run`).toEqual(before[t]);
      expect(await table(t, `${t}_asof(now())`), `${t} as known now`).toEqual(now);
    }
    // before any run: nothing was known
    expect(await table('risk_daily', `risk_daily_asof('2000-01-01 00:00:00+00')`)).toEqual([]);
    const kept = await ws!.db.all<{ written_by_run: number; replaced_by_run: number; n: number }>(
      `select written_by_run, replaced_by_run, count(*)::integer as n from risk_daily_history group by all`,
    );
    // the correction dated 2020-03-10 replaced the rows from that date on, not earlier ones
    const [{ n: fromFix }] = await ws!.db.all<{ n: number }>(`select count(*)::integer as n from risk_daily where date >= '2020-03-10'`);
    expect(kept).toEqual([{ written_by_run: 1, replaced_by_run: 2, n: fromFix }]);

    // the read-only `sql` command and an outside client on the read copy can call the macros too
    const asBefore = `select count(*) as n, sum(vol_ex_ante) as vol from risk_daily_asof('${firstDone}')`;
    const expected = await ws!.db.all<{ n: string; vol: number }>(asBefore);
    ws!.closeDb();
    const cli = runCli(['sql', asBefore, '--config', ws!.config.configPath, '--format', 'json']);
    expect(cli.status, cli.stderr).toBe(0);
    expect(JSON.parse(cli.stdout)).toEqual([{ n: Number(expected[0].n), vol: expected[0].vol }]);
    const copy = await openDatabase(ws!.config.readCopy, { readOnly: true });
    try {
      expect(await copy.all(asBefore)).toEqual(expected);
    } finally {
      copy.close();
    }
  });

  it('a run that fails in its write step leaves history as it was: no row current twice, none lost', async () => {
    await loadHistoryAndCorrect();
    expect((await runBatch(ws!.db, ws!.config, ws!.log, [correction()])).runError).toBeNull();
    const tables = KEPT.flatMap((t) => [t, `${t}_history`]);
    const state = async () =>
      Object.fromEntries(await Promise.all(tables.map(async (t) => [t, await ws!.db.all(`select * from ${t} order by all`)])));
    const settled = await state();

    // fails after the history was written, inside the same transaction
    const failing: RunWriter = { name: 'fails', write: () => Promise.reject(new Error('disk gone')) };
    const request = { trigger: 'recompute', from: '2020-02-01' };
    await expect(runRecompute(ws!.db, ws!.config, ws!.log, request, [...RUN_WRITERS, failing])).rejects.toThrow('disk gone');
    expect(await state()).toEqual(settled);

    // then a run that finishes: at every run's finish and now, each key is current once
    await runRecompute(ws!.db, ws!.config, ws!.log, request);
    const times = await ws!.db.all<{ ts: string }>(
      `select finished_at::varchar as ts from risk_runs where status = 'done' order by run_id`,
    );
    expect(times).toHaveLength(3);
    for (const { ts } of times) {
      const twice = await ws!.db.all(
        `select portfolio_id, date, window_days, estimator from risk_daily_asof('${ts}') group by all having count(*) > 1`,
      );
      expect(twice, `as of ${ts}`).toEqual([]);
    }
    // none lost: what was current after the correction is still what risk_daily_asof says of that time
    const correctionDone = times[1].ts;
    expect(await table('risk_daily', `risk_daily_asof('${correctionDone}')`)).toEqual(
      [...settled.risk_daily].sort(byKey),
    );
  });

  it('a kill after history was written, before the commit, leaves neither; the restart keeps the replaced rows once', async () => {
    await loadHistoryAndCorrect();
    const before = await table('risk_daily', 'risk_daily');
    const firstDone = await finishedAt(1);
    ws!.closeDb();
    correction();
    const killed = startCli(['ingest', '--config', ws!.config.configPath], { RISKFOLD_FAULT: 'kept' });
    expect((await killed.exited).signal).toBe('SIGKILL');

    const afterKill = await openDatabase(ws!.config.database, { readOnly: true });
    try {
      expect(await afterKill.all('select count(*)::integer as n from risk_daily_history')).toEqual([{ n: 0 }]);
      expect(await afterKill.all(`select * from risk_daily order by ${ORDER.risk_daily}`)).toEqual(before);
    } finally {
      afterKill.close();
    }

    const restart = startCli(['ingest', '--config', ws!.config.configPath]);
    expect((await restart.exited).code, JSON.stringify(restart.logLines().slice(-3))).toBe(0);
    const db = await openDatabase(ws!.config.database, { readOnly: true });
    try {
      expect(await db.all('select run_id, status from risk_runs order by run_id')).toEqual([
        { run_id: 1, status: 'done' },
        { run_id: 2, status: 'interrupted' },
        { run_id: 3, status: 'done' },
      ]);
      expect(await db.all('select distinct written_by_run, replaced_by_run from risk_daily_history')).toEqual([
        { written_by_run: 1, replaced_by_run: 3 },
      ]);
      expect(await db.all(`select * from risk_daily_asof('${firstDone}') order by ${ORDER.risk_daily}`)).toEqual(before);
      expect(
        await db.all(`select portfolio_id, date, window_days, estimator from risk_daily_asof(now()) group by all having count(*) > 1`),
      ).toEqual([]);
    } finally {
      db.close();
    }
  });
});

function byKey(a: Record<string, unknown>, b: Record<string, unknown>): number {
  const key = (r: Record<string, unknown>) => [r.portfolio_id, r.date, String(r.window_days).padStart(6, '0'), r.estimator].join('|');
  return key(a) < key(b) ? -1 : key(a) > key(b) ? 1 : 0;
}
