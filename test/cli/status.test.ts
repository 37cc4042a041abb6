import { writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { runBatch } from '../../src/batch/runBatch.ts';
import { writeCsv } from '../helpers/files.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';
import { pricesCsv } from '../helpers/files.ts';
import { runCli } from './cliProcess.ts';

describe('riskfold status and sql with no worker running', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  async function loaded(): Promise<TempWorkspace> {
    ws = await tempWorkspace();
    writeFileSync(path.join(ws.config.inbox, 'prices_2020.csv'), pricesCsv(70, 2));
    writeCsv(ws.config.inbox, 'positions_bad.csv', [['date', 'portfolio_id', 'security_id'], ['2020-01-01', 'acct-growth', 'EQ-NORDWIND']]);
    await runBatch(ws.db, ws.config, ws.log, [
      path.join(ws.config.inbox, 'prices_2020.csv'),
      path.join(ws.config.inbox, 'positions_bad.csv'),
    ]);
    // free the primary file, as when no worker runs (cleanup's second close is harmless)
    ws.db.close();
    return ws;
  }

  it('status prints each section as a table, with the rejected file and its reason', async () => {
    const w = await loaded();
    const r = runCli(['status', '--config', w.config.configPath]);
    expect(r.status).toBe(0);
    expect(r.stderr).toBe(''); // the primary file was free: no read-copy note
    for (const title of ['last files', 'last run', 'open breaches', 'undelivered alerts', 'data problems on the latest valuation date']) {
      expect(r.stdout).toContain(`== ${title}`);
    }
    expect(r.stdout).toMatch(/positions_bad\.csv\s+positions\s+rejected/);
    expect(r.stdout).toMatch(/missing_column|quantity/);
  });

  it('status --format json has one key per section with rows and totals', async () => {
    const w = await loaded();
    const r = runCli(['status', '--config', w.config.configPath, '--format', 'json']);
    const body = JSON.parse(r.stdout) as Record<string, { total: number; rows: Record<string, unknown>[] }> & { source: string };
    expect(body.source).toBe('database');
    expect(Object.keys(body)).toEqual(['source', 'lastFiles', 'lastRun', 'openBreaches', 'undeliveredAlerts', 'dataProblems']);
    expect(body.lastFiles.total).toBe(2);
    expect(body.lastRun.rows[0]).toMatchObject({ trigger: 'ingest:prices_2020.csv', status: 'done' });
    expect(body.openBreaches.total).toBe(0);
  });

  it('sql --format table aligns a query for people; a bad format is one line and exit 2', async () => {
    const w = await loaded();
    const r = runCli(['sql', 'select security_id, count(*) as days from prices group by 1 order by 1', '--config', w.config.configPath]);
    expect(r.stdout).toBe('security_id   days\n------------  ----\nEQ-NORDWIND     70\nEQ-SALTMARSH    70\n(2 rows)\n');
    const bad = runCli(['sql', 'select 1', '--config', w.config.configPath, '--format', 'xml']);
    expect(bad.status).toBe(2);
    expect(bad.stderr).toBe('riskfold: --format must be one of table, csv, json, got "xml"\n');
  });
});
