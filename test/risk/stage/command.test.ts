import { afterEach, describe, expect, it } from 'vitest';
import { memoryLogger } from '../../../src/log/logger.ts';
import { startProgress } from '../../../src/risk/runtime/progress.ts';
import { openDatabase } from '../../../src/storage/database.ts';
import { runCli } from '../../cli/cliProcess.ts';
import { tempWorkspace, type TempWorkspace } from '../../helpers/workspace.ts';
import { buildScenario, loadDays, RISK } from './scenario.ts';

describe('riskfold recompute', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  it('backfills everything, then recomputes one portfolio from a date, one summary line each', async () => {
    ws = await tempWorkspace({ risk: RISK });
    const s = buildScenario(120);
    await loadDays(ws.db, s, 0, s.dates.length - 1);
    ws.db.close(); // the command opens the workspace itself
    const full = runCli(['recompute', '--config', ws.config.configPath]);
    expect(full.stderr.split('\n').filter((l) => l.includes('"level":50'))).toEqual([]);
    expect(full.status).toBe(0);
    const last = s.dates[s.dates.length - 1];
    expect(full.stdout).toMatch(new RegExp(`^run 1: 2 portfolios, start \\.\\. ${last}, [\\d,]+ risk rows, \\d+ alerts?, [\\d.]+ s\n$`));
    const part = runCli(['recompute', '--config', ws.config.configPath, '--from', s.dates[100], '--portfolio', 'acct-growth']);
    expect(part.status).toBe(0);
    expect(part.stdout).toMatch(new RegExp(`^run 2: 1 portfolio, ${s.dates[100]} \\.\\. ${last}, 60 risk rows`));
    const db = await openDatabase(ws.config.readCopy, { readOnly: true });
    try {
      const runs = await db.all('select run_id, status, from_date, portfolios from risk_runs order by run_id');
      expect(runs).toEqual([
        { run_id: 1, status: 'done', from_date: null, portfolios: null },
        { run_id: 2, status: 'done', from_date: s.dates[100], portfolios: ['acct-growth'] },
      ]);
    } finally {
      db.close();
    }
  });

  it('refuses a date that is not YYYY-MM-DD with one line and exit code 2', async () => {
    ws = await tempWorkspace();
    ws.db.close();
    const r = runCli(['recompute', '--config', ws.config.configPath, '--from', '31.03.2024']);
    expect(r.status).toBe(2);
    expect(r.stderr.trim().split('\n')).toEqual(['riskfold: from date "31.03.2024" is not an ISO date (YYYY-MM-DD, e.g. 2026-03-31)']);
  });
});

describe('startProgress', () => {
  it('without a TTY logs about every 10% of a long run, and nothing for a short one', () => {
    const { log, lines } = memoryLogger();
    let clock = 0;
    const progress = startProgress(log, 200, 'recompute', { isTty: false, now: () => clock, intervalMs: 60_000 });
    for (let i = 0; i < 200; i++) progress.advance();
    progress.finish();
    expect(lines().map((l) => l.percent)).toEqual([10, 20, 30, 40, 50, 60, 70, 80, 90, 100]);
    const quiet = memoryLogger();
    const short = startProgress(quiet.log, 10, 'recompute', { isTty: false });
    for (let i = 0; i < 10; i++) short.advance();
    expect(quiet.lines()).toEqual([]);
    // and every intervalMs in between when progress is slow
    const slow = memoryLogger();
    const timed = startProgress(slow.log, 1000, 'recompute', { isTty: false, now: () => clock, intervalMs: 5000 });
    for (let i = 0; i < 50; i++) {
      clock += 1000;
      timed.advance();
    }
    expect(slow.lines().length).toBe(10);
  });
});
