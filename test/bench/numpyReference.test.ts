import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { generateScenario } from '../../bench/generate.ts';
import type { ScenarioSize } from '../../bench/scenario.ts';
import { ingestHistory } from '../../bench/stages/ingest.ts';
import { numpyAvailable, numpyReferenceArgs, runNumpyReference } from '../../bench/stages/numpyReference.ts';
import { createBenchWorkspace } from '../../bench/workspace.ts';
import { runRecompute } from '../../src/batch/runRecompute.ts';
import { memoryLogger } from '../../src/log/logger.ts';
import { sqlString } from '../../src/storage/database.ts';
import { openWorkspace } from '../../src/storage/workspace.ts';

// bench/numpy_reference.py is the bench's yardstick for speed (issue 13): this test makes
// sure it computes the same figures riskfold does, so the comparison is between equals.
// numpy is the outside reference here: its var/std (ddof=1), matrix product and log1p.
const hasNumpy = numpyAvailable();

// 300 business days: every window of the bench (21, 63, 252) fills, and about five prices
// go missing and are carried forward (bench/generate.ts leaves out one in 2,000)
const SIZE: ScenarioSize = {
  name: 'tiny',
  securities: 30,
  portfolios: 3,
  holdingsPerPortfolio: 10,
  historyDays: 300,
  newDays: 1,
  windows: [21, 63, 252],
  correctionDays: 1,
  runs: 1,
};
// two ways of summing the same doubles (a sliding covariance against numpy's two-pass
// variance of the projected series) agree to a few ulps times the window's length
const RELATIVE_TOLERANCE = 1e-9;

describe.skipIf(!hasNumpy)('bench/numpy_reference.py on a bench scenario', () => {
  const root = mkdtempSync(path.join(tmpdir(), 'riskfold-numpy-ref-'));
  afterAll(() => rmSync(root, { recursive: true, force: true }));

  it('gives every value and volatility riskfold writes to risk_daily (sample windows and EWMA), to 1e-9 relative', async () => {
    const scenario = await generateScenario(SIZE, path.join(root, 'scenario'));
    const ws = createBenchWorkspace(root, 'ws', SIZE);
    const { log } = memoryLogger('warn');
    await ingestHistory(scenario, ws, log);
    const out = path.join(root, 'numpy.csv');
    const run = await runNumpyReference(numpyReferenceArgs(scenario.history, ws.config, out));

    const db = await openWorkspace(ws.config, log);
    try {
      await runRecompute(db, ws.config, log, { trigger: 'test', from: null, portfolios: null });
      const relative = (column: string) => `max(abs(n.${column} - r.${column}) / abs(r.${column}))`;
      const [cmp] = await db.all<Record<string, number | null>>(
        `with n as (select * from read_csv(${sqlString(out)}, types = {'date': 'date', 'window_days': 'integer'})),
         -- the script computes the sample windows and the EWMA; the bench's shrunk window is riskfold's alone
         r as (select * from risk_daily where vol_ex_ante is not null and estimator in ('sample', 'ewma'))
         select
           count(*) filter (where r.portfolio_id is null)::integer as only_numpy,
           count(*) filter (where n.portfolio_id is null)::integer as only_riskfold,
           count(*) filter (where n.portfolio_id is not null and r.portfolio_id is not null)::integer as compared,
           count(*) filter (where r.estimator = 'ewma')::integer as ewma_compared,
           count(distinct r.window_days)::integer as windows,
           ${relative('portfolio_value')} as value_diff,
           ${relative('vol_ex_ante')} as vol_ex_ante_diff,
           ${relative('vol_realized')} as vol_realized_diff,
           ${relative('ann_return')} as ann_return_diff
         from n full join r using (portfolio_id, date, estimator, window_days)`,
      );
      // every figure of one side has its twin on the other
      expect(cmp).toMatchObject({ only_numpy: 0, only_riskfold: 0, compared: run.figures, windows: 4 });
      expect(cmp.ewma_compared).toBeGreaterThan(0);
      for (const diff of ['value_diff', 'vol_ex_ante_diff', 'vol_realized_diff', 'ann_return_diff']) {
        expect(cmp[diff], diff).toBeLessThan(RELATIVE_TOLERANCE);
      }
    } finally {
      db.close();
    }
  }, 300_000);
});
