import { afterEach, describe, expect, it } from 'vitest';
import { runBatch } from '../../src/batch/runBatch.ts';
import { runRecompute } from '../../src/batch/runRecompute.ts';
import { RUN_WRITERS, type RunWriter } from '../../src/batch/runWriters.ts';
import { writeTwoHoldings } from '../helpers/files.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';

describe('runRecompute: the write step', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  /** Two securities over 80 days, held by one account: enough for the 63-day window. */
  async function loaded(): Promise<TempWorkspace> {
    const w = await tempWorkspace();
    const batch = await runBatch(w.db, w.config, w.log, writeTwoHoldings(w.config.inbox, { days: 80 }));
    expect(batch.runError).toBeNull();
    return w;
  }

  const count = async (sql: string) => Number((await ws!.db.all<{ n: bigint | number }>(sql))[0].n);

  it('runs an added writer in the same transaction, after the risk rows are written', async () => {
    ws = await loaded();
    const seen: { rowsOfRun: number; staged: number; runStatus: string }[] = [];
    const probe: RunWriter = {
      name: 'probe',
      write: async (tx, run) => {
        const [{ n }] = await tx.all<{ n: number }>('select count(*)::integer as n from risk_daily where run_id = $1', [run.runId]);
        const [{ status }] = await tx.all<{ status: string }>('select status from risk_runs where run_id = $1', [run.runId]);
        seen.push({ rowsOfRun: n, staged: run.risk.riskRows, runStatus: status });
      },
    };
    const summary = await runRecompute(ws.db, ws.config, ws.log, { trigger: 'test' }, [...RUN_WRITERS, probe]);
    expect(seen).toHaveLength(1);
    expect(seen[0].rowsOfRun).toBeGreaterThan(0);
    expect(seen[0].rowsOfRun).toBe(seen[0].staged);
    // the run is marked done only after every writer, in the same transaction
    expect(seen[0].runStatus).toBe('running');
    expect(Object.keys(summary.phases)).toEqual(expect.arrayContaining(['refresh_derived', 'write', 'save_ewma_state', 'limits', 'probe']));
  });

  it('rolls back every writer when one fails: the old rows stay, the run is failed', async () => {
    ws = await loaded();
    const before = await count('select count(*) as n from risk_daily');
    expect(before).toBeGreaterThan(0);
    const breachesBefore = await count('select count(*) as n from limit_breaches');
    const failing: RunWriter = {
      name: 'failing',
      write: () => Promise.reject(new Error('disk full while writing the probe')),
    };
    await expect(runRecompute(ws.db, ws.config, ws.log, { trigger: 'test' }, [...RUN_WRITERS, failing])).rejects.toThrow(/disk full/);
    expect(await count('select count(*) as n from risk_daily')).toBe(before);
    expect(await count('select count(*) as n from limit_breaches')).toBe(breachesBefore);
    // the new run's rows were written by the first writer, then rolled back with it
    expect(await count("select count(*) as n from risk_daily where run_id = (select max(run_id) from risk_runs)")).toBe(0);
    const [last] = await ws.db.all<{ status: string; error: string }>('select status, error from risk_runs order by run_id desc limit 1');
    expect(last).toEqual({ status: 'failed', error: 'disk full while writing the probe' });
  });
});
