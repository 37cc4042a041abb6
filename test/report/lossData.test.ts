import { afterEach, describe, expect, it } from 'vitest';
import { loadLossData } from '../../src/report/lossData.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';

describe('loadLossData', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  it('lists the VaR of each method by window, a window\'s estimators side by side, the EWMA last of the normal ones', async () => {
    ws = await tempWorkspace({ limits: [] });
    const series = [
      ['filtered_historical', 250, null],
      ['normal', 0, 'ewma'],
      ['historical', 500, null],
      ['normal', 63, 'shrunk'],
      ['normal', 252, 'sample'],
      ['historical', 250, null],
      ['normal', 21, 'sample'],
      ['normal', 63, 'sample'],
    ] as const;
    const values = series.map(([method, days, estimator]) => `('acct-a', '2026-03-02', '${method}', ${days}, ${estimator === null ? 'null' : `'${estimator}'`}, 1, 1, 1, 'ok', [], 1)`);
    await ws.db.run(
      `insert into var_daily (portfolio_id, date, method, window_days, estimator, var_99_1d, es_975_1d, coverage, status, missing, run_id) values ${values.join(',')}`,
    );
    const { methods } = await loadLossData(ws.db, 'acct-a', '2026-03-02', 63, '2026-01-01');
    expect(methods.map((m) => `${m.method} ${m.window_days} ${m.estimator}`)).toEqual([
      'normal 21 sample',
      'normal 63 sample',
      'normal 63 shrunk',
      'normal 252 sample',
      'normal 0 ewma',
      'historical 250 null',
      'historical 500 null',
      'filtered_historical 250 null',
    ]);
  });
});
