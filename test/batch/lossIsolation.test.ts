import { readFileSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { failingPortfolios } from '../../src/batch/portfolioIncident.ts';
import { runRecompute } from '../../src/batch/runRecompute.ts';
import type { Database } from '../../src/storage/database.ts';
import { openWorkspace } from '../../src/storage/workspace.ts';
import { runCli } from '../cli/cliProcess.ts';
import { pricesCsv, writeCsv } from '../helpers/files.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';

// An invented desk of three portfolios on the same two securities. The fault hook
// (src/faults.ts, `loss:<id>`) makes only the loss stage (src/loss) throw for acct-b,
// after its risk was computed: the run must still write the other two.
const FAULT = { RISKFOLD_FAULT_PORTFOLIO: 'loss:acct-b' };

describe('one portfolio whose loss figures cannot be computed', () => {
  let ws: TempWorkspace | undefined;
  let db: Database | undefined;
  afterEach(() => {
    db?.close();
    db = undefined;
    ws?.cleanup();
  });

  const portfoliosIn = async (d: Database, table: string) =>
    (await d.all<{ portfolio_id: string }>(`select distinct portfolio_id from ${table} order by 1`)).map((r) => r.portfolio_id);

  it('fails only that portfolio, risk and loss rows alike, as its own incident until a run computes it again', async () => {
    ws = await tempWorkspace({ limits: [{ portfolio: '*', window: 63, limit: 0.005 }] });
    writeFileSync(path.join(ws.config.inbox, 'prices_2020.csv'), pricesCsv(70, 2));
    writeCsv(ws.config.inbox, 'positions_2020.csv', [
      ['date', 'portfolio_id', 'security_id', 'quantity'],
      ...['acct-a', 'acct-b', 'acct-c'].flatMap((id, k) => [
        ['2020-01-01', id, 'EQ-NORDWIND', 100 * (k + 1)],
        ['2020-01-01', id, 'EQ-SALTMARSH', 50],
      ]),
    ]);
    ws.closeDb();
    const ingest = runCli(['ingest', '--config', ws.config.configPath], 150_000, FAULT);
    expect(ingest.status, ingest.stderr).toBe(0);
    expect(ingest.stdout).toMatch(/^portfolio acct-b not computed \(from 2020-01-01\), its figures are those of its last good run: historical VaR: injected fault for portfolio acct-b$/m);
    const delivered = readFileSync(ws.config.alerts.file!, 'utf8').trim().split('\n').map((l) => JSON.parse(l) as Record<string, unknown>);
    const incidents = delivered.filter((a) => a.kind === 'run_failed');
    expect(incidents.map((a) => [a.alert_id, a.portfolio_id])).toEqual([['run-failed-1-portfolio-acct-b-open', 'acct-b']]);
    expect((incidents[0].payload as { error: string }).error).toBe('historical VaR: injected fault for portfolio acct-b');
    const limitAlerted = new Set(delivered.filter((a) => String(a.kind).startsWith('limit_')).map((a) => a.portfolio_id));
    expect([...limitAlerted].sort()).toEqual(['acct-a', 'acct-c']);

    db = await openWorkspace(ws.config, ws.log);
    for (const table of ['risk_daily', 'var_daily', 'var_backtest', 'stress_results', 'vol_change']) {
      expect(await portfoliosIn(db, table), table).toEqual(['acct-a', 'acct-c']);
    }
    expect(await db.all(`select run_id, status from risk_runs`)).toEqual([{ run_id: 1, status: 'done' }]);

    // without the fault, the next run computes it and closes the episode
    await runRecompute(db, ws.config, ws.log, { trigger: 'recompute' });
    for (const table of ['risk_daily', 'var_daily', 'var_backtest', 'stress_results']) {
      expect(await portfoliosIn(db, table), table).toEqual(['acct-a', 'acct-b', 'acct-c']);
    }
    expect(await failingPortfolios(db)).toEqual([]);
  }, 180_000);
});
