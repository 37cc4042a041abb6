import { afterEach, describe, expect, it } from 'vitest';
import { openDatabase } from '../../src/storage/database.ts';
import { startCli } from '../cli/cliProcess.ts';
import type { TempWorkspace } from '../helpers/workspace.ts';
import { correction, finishedAt, loadedWorkspace, ORDER, readKept } from './correctionScenario.ts';

// A real kill (RISKFOLD_FAULT, src/faults.ts) inside a run's write transaction; what must
// hold is transaction-time bookkeeping, common practice, no source.

describe('history after a killed run', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  it('a kill after history was written, before the commit, leaves neither; the restart keeps the replaced rows once', async () => {
    ws = await loadedWorkspace();
    const before = await readKept(ws!.db, 'risk_daily', 'risk_daily');
    const firstDone = await finishedAt(ws!.db, 1);
    ws!.closeDb();
    correction(ws!);
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
