import { afterEach, describe, expect, it } from 'vitest';
import { runBatch } from '../../src/batch/runBatch.ts';
import { runRecompute } from '../../src/batch/runRecompute.ts';
import type { TempWorkspace } from '../helpers/workspace.ts';
import { correction, loadedWorkspace } from './correctionScenario.ts';

// Retention of kept history (history.keepDays): common practice for audit trails, no source.

describe('history.keepDays', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  it('history.keepDays prunes rows replaced longer ago, records the pruning, and keeps younger rows', async () => {
    ws = await loadedWorkspace({ history: { keepDays: 30 } });
    expect((await runBatch(ws.db, ws.config, ws.log, [correction(ws)])).runError).toBeNull();
    const [{ n: kept }] = await ws.db.all<{ n: number }>('select count(*)::integer as n from risk_daily_history');
    // as if the correction had replaced them 40 days ago (the test cannot wait that long)
    await ws.db.run(`update risk_daily_history set valid_to = valid_to - interval 40 days, valid_from = valid_from - interval 41 days`);
    await runRecompute(ws.db, ws.config, ws.log, { trigger: 'recompute', from: '2020-03-20' });

    const left = await ws.db.all<{ replaced_by_run: number; n: number }>(
      'select replaced_by_run, count(*)::integer as n from risk_daily_history group by all order by all',
    );
    const [{ n: fromLate }] = await ws.db.all<{ n: number }>(`select count(*)::integer as n from risk_daily where date >= '2020-03-20'`);
    expect(left).toEqual([{ replaced_by_run: 3, n: fromLate }]);
    const prunes = await ws.db.all<{ table_name: string; rows: number; run_id: number; days: number }>(
      `select table_name, rows::integer as rows, run_id, date_diff('day', cutoff, pruned_at)::integer as days from history_prunes`,
    );
    // only risk_daily's history was made old: the other tables' history stays whole
    expect(prunes).toEqual([{ table_name: 'risk_daily_history', rows: kept, run_id: 3, days: 30 }]);
  });
});
