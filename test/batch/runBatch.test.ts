import { existsSync, utimesSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { runBatch } from '../../src/batch/runBatch.ts';
import { applyViews } from '../../src/storage/sqlFiles.ts';
import { writeCsv } from '../helpers/files.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';
import { pricesCsv } from '../helpers/files.ts';

interface RunRow {
  run_id: number;
  trigger: string;
  from_date: string | null;
  portfolios: string[] | null;
  status: string;
}

describe('runBatch', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  const runs = () => ws!.db.all<RunRow>('select run_id, trigger, from_date, portfolios, status from risk_runs order by run_id');
  const inbox = (name: string, text: string) => {
    const file = path.join(ws!.config.inbox, name);
    writeFileSync(file, text);
    return file;
  };
  // arrival = modification time, set apart: files written in the same millisecond would arrive by name
  const arrived = (file: string, second: number) => (utimesSync(file, 0, new Date(Date.UTC(2026, 3, 10, 18, 0, second))), file);
  const positions = (name: string, date: string, portfolio: string) =>
    writeCsv(ws!.config.inbox, name, [
      ['date', 'portfolio_id', 'security_id', 'quantity'],
      [date, portfolio, 'EQ-NORDWIND', 100],
      [date, portfolio, 'EQ-SALTMARSH', 50],
    ]);

  it('ingests prices before positions, each kind in arrival order, and runs ONE recompute from the earliest date for every portfolio', async () => {
    ws = await tempWorkspace();
    // the positions landed first, yet load after the prices they are valued with
    const files = [
      arrived(positions('positions_start.csv', '2020-01-01', 'acct-growth'), 1),
      arrived(inbox('prices_late.csv', pricesCsv(80, 2, '2020-03-01')), 2),
      arrived(inbox('prices_early.csv', pricesCsv(40, 2, '2020-01-01')), 3),
    ];
    const summary = await runBatch(ws.db, ws.config, ws.log, files);
    expect(summary.files.map((f) => [f.name, f.status])).toEqual([
      ['prices_late.csv', 'ingested'],
      ['prices_early.csv', 'ingested'],
      ['positions_start.csv', 'ingested'],
    ]);
    expect(summary.runError).toBeNull();
    expect(await runs()).toEqual([
      { run_id: summary.run!.runId, trigger: 'ingest:prices_late.csv(+2)', from_date: '2020-01-01', portfolios: null, status: 'done' },
    ]);
    const [{ n }] = await ws.db.all<{ n: number }>("select count(*)::integer as n from risk_daily where portfolio_id = 'acct-growth'");
    expect(n).toBeGreaterThan(0);
  });

  it('tells the caller the run is committed before it publishes the read copy (the worker delivers its alerts from there)', async () => {
    ws = await tempWorkspace();
    const session = await ws.db.openSession();
    try {
      let seen: { readCopy: boolean; runs: Promise<{ status: string }[]> } | null = null;
      const file = inbox('prices_first.csv', pricesCsv(80, 2, '2020-01-01'));
      await runBatch(ws.db, ws.config, ws.log, [arrived(positions('positions_first.csv', '2020-01-01', 'acct-growth'), 1), file], {
        deliver: false,
        onCommitted: () => {
          // another connection sees only committed rows
          seen = { readCopy: existsSync(ws!.config.readCopy), runs: session.all('select status from risk_runs') };
        },
      });
      expect(seen).not.toBeNull();
      expect(seen!.readCopy).toBe(false);
      expect(await seen!.runs).toEqual([{ status: 'done' }]);
      expect(existsSync(ws.config.readCopy)).toBe(true);
    } finally {
      session.close();
    }
  });

  it('limits a positions-only batch to its portfolios, and runs nothing for a duplicate', async () => {
    ws = await tempWorkspace();
    await runBatch(ws.db, ws.config, ws.log, [inbox('prices_all.csv', pricesCsv(80, 2, '2020-01-01'))]);
    const second = await runBatch(ws.db, ws.config, ws.log, [
      arrived(positions('positions_b.csv', '2020-02-03', 'acct-income'), 1),
      arrived(positions('positions_a.csv', '2020-01-06', 'acct-growth'), 2),
    ]);
    expect((await runs()).at(-1)).toMatchObject({
      trigger: 'ingest:positions_b.csv(+1)',
      from_date: '2020-01-06',
      portfolios: ['acct-growth', 'acct-income'],
      status: 'done',
    });
    expect(second.scope?.portfolios).toEqual(['acct-growth', 'acct-income']);
    const before = (await runs()).length;
    const dup = await runBatch(ws.db, ws.config, ws.log, [inbox('prices_again.csv', pricesCsv(80, 2, '2020-01-01'))]);
    expect(dup.files[0].status).toBe('duplicate');
    expect(dup.run).toBeNull();
    expect((await runs()).length).toBe(before);
  });

  it('after a failed recompute, the next batch covers the files the failure left behind', async () => {
    ws = await tempWorkspace();
    // a missing view makes the risk stage fail, as a broken migration or disk would
    await ws.db.run('drop macro table ret_portfolios_since');
    const failed = await runBatch(ws.db, ws.config, ws.log, [inbox('prices_first.csv', pricesCsv(80, 2, '2020-01-01'))]);
    expect(failed.files[0].status).toBe('ingested');
    expect(failed.runError).not.toBeNull();
    await applyViews(ws.db, ws.log);
    const next = await runBatch(ws.db, ws.config, ws.log, [positions('positions_a.csv', '2020-03-02', 'acct-growth')]);
    expect(next.runError).toBeNull();
    // the prices file widens the positions-only batch back to every portfolio and its first date
    expect(next.scope).toEqual({ from: '2020-01-01', portfolios: null, files: ['positions_a.csv', 'prices_first.csv'] });
    expect((await runs()).map((r) => r.status)).toEqual(['failed', 'done']);
  });

  it('skips a file that left the inbox before its turn and, once asked to stop, leaves the rest there', async () => {
    ws = await tempWorkspace();
    const gone = path.join(ws.config.inbox, 'prices_gone.csv');
    const first = inbox('prices_a.csv', pricesCsv(5, 2, '2020-01-01'));
    const rest = inbox('prices_b.csv', pricesCsv(5, 2, '2020-02-01'));
    let stop = false;
    const summary = await runBatch(ws.db, ws.config, ws.log, [gone, first, rest], {
      onFile: () => (stop = true),
      shouldStop: () => stop,
    });
    expect(summary.files.map((f) => f.name)).toEqual(['prices_a.csv']);
    // a file already gone sorts last
    expect(summary.skipped).toEqual([rest, gone]);
    expect(summary.run?.runId).toBeGreaterThan(0);
  });
});
