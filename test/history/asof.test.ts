import { afterEach, describe, expect, it } from 'vitest';
import { runBatch } from '../../src/batch/runBatch.ts';
import { runRecompute } from '../../src/batch/runRecompute.ts';
import { RUN_WRITERS, type RunWriter } from '../../src/batch/runWriters.ts';
import { openDatabase } from '../../src/storage/database.ts';
import { runCli } from '../cli/cliProcess.ts';
import type { TempWorkspace } from '../helpers/workspace.ts';
import { correction, finishedAt, KEPT, loadedWorkspace, readKept } from './correctionScenario.ts';

// What is checked is the bookkeeping of system time (a row is current from the run that
// wrote it until the run that replaced it): common practice for transaction-time tables,
// no source.

describe('results as known at a past system time', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  it('after a correction, <table>_asof before it returns the earlier rows exactly, and at now the current ones', async () => {
    ws = await loadedWorkspace();
    const before = Object.fromEntries(await Promise.all(KEPT.map(async (t) => [t, await readKept(ws!.db, t)])));
    expect(before.limit_breaches.length).toBeGreaterThan(0);
    const firstDone = await finishedAt(ws.db, 1);
    expect((await runBatch(ws.db, ws.config, ws.log, [correction(ws)])).runError).toBeNull();

    for (const t of KEPT) {
      const now = await readKept(ws.db, t);
      expect(now, `${t} changed by the correction`).not.toEqual(before[t]);
      expect(await readKept(ws.db, t, `${t}_asof('${firstDone}')`), `${t} as known after the first run`).toEqual(before[t]);
      expect(await readKept(ws.db, t, `${t}_asof(now())`), `${t} as known now`).toEqual(now);
    }
    // before any run: nothing was known
    expect(await readKept(ws.db, 'risk_daily', `risk_daily_asof('2000-01-01 00:00:00+00')`)).toEqual([]);
    const kept = await ws.db.all<{ written_by_run: number; replaced_by_run: number; n: number }>(
      `select written_by_run, replaced_by_run, count(*)::integer as n from risk_daily_history group by all`,
    );
    // the correction dated 2020-03-10 replaced the rows from that date on, not earlier ones
    const [{ n: fromFix }] = await ws.db.all<{ n: number }>(`select count(*)::integer as n from risk_daily where date >= '2020-03-10'`);
    expect(kept).toEqual([{ written_by_run: 1, replaced_by_run: 2, n: fromFix }]);

    // the read-only `sql` command and an outside client on the read copy can call the macros too
    const asBefore = `select count(*) as n, sum(vol_ex_ante) as vol from risk_daily_asof('${firstDone}')`;
    const expected = await ws.db.all<{ n: string; vol: number }>(asBefore);
    ws!.closeDb();
    const cli = runCli(['sql', asBefore, '--config', ws.config.configPath, '--format', 'json']);
    expect(cli.status, cli.stderr).toBe(0);
    expect(JSON.parse(cli.stdout)).toEqual([{ n: Number(expected[0].n), vol: expected[0].vol }]);
    const copy = await openDatabase(ws.config.readCopy, { readOnly: true });
    try {
      expect(await copy.all(asBefore)).toEqual(expected);
    } finally {
      copy.close();
    }
  });

  it('a run that fails in its write step leaves history as it was: no row current twice, none lost', async () => {
    ws = await loadedWorkspace();
    const current = async () => Object.fromEntries(await Promise.all(KEPT.map(async (t) => [t, await readKept(ws!.db, t)])));
    const afterLoad = await current();
    expect((await runBatch(ws.db, ws.config, ws.log, [correction(ws)])).runError).toBeNull();
    const afterCorrection = await current();
    const tables = KEPT.flatMap((t) => [t, `${t}_history`]);
    const state = async () =>
      Object.fromEntries(await Promise.all(tables.map(async (t) => [t, await ws!.db.all(`select * from ${t} order by all`)])));
    const settled = await state();

    // fails after the history was written, inside the same transaction
    const failing: RunWriter = { name: 'fails', write: () => Promise.reject(new Error('disk gone')) };
    const request = { trigger: 'recompute', from: '2020-02-01' };
    await expect(runRecompute(ws.db, ws.config, ws.log, request, [...RUN_WRITERS, failing])).rejects.toThrow('disk gone');
    expect(await state()).toEqual(settled);

    // then a run that finishes: as of each finished run, every key is current once and
    // every table reads exactly as it was then (the failed run, 3, left nothing)
    await runRecompute(ws.db, ws.config, ws.log, request);
    const done = await ws.db.all<{ run_id: number; ts: string }>(
      `select run_id, finished_at::varchar as ts from risk_runs where status = 'done' order by run_id`,
    );
    expect(done.map((r) => r.run_id)).toEqual([1, 2, 4]);
    const asWas = [afterLoad, afterCorrection, await current()];
    for (const [i, { ts }] of done.entries()) {
      const twice = await ws.db.all(
        `select portfolio_id, date, window_days, estimator from risk_daily_asof('${ts}') group by all having count(*) > 1`,
      );
      expect(twice, `as of ${ts}`).toEqual([]);
      for (const t of KEPT) expect(await readKept(ws.db, t, `${t}_asof('${ts}')`), `${t} as of run ${done[i].run_id}`).toEqual(asWas[i][t]);
    }
  });
});
