import { existsSync, readFileSync } from 'node:fs';
import { afterEach, describe, expect, it } from 'vitest';
import { insertAlert } from '../../src/alerts/outbox.ts';
import { ALERT_RETRY_DEFAULTS } from '../../src/config/schema.ts';
import type { Database } from '../../src/storage/database.ts';
import { waitFor } from '../helpers/wait.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';
import { runCli, startCli, type RunningCli } from './cliProcess.ts';

/** Three alerts: one delivered, one that used up maxAttempts, one waiting for its first delivery. */
async function outbox(db: Database): Promise<void> {
  for (const [id, day] of [['delivered-1', '02'], ['given-up-2', '03'], ['waiting-3', '04']] as const) {
    await insertAlert(db, {
      alertId: id,
      kind: 'limit_opened',
      portfolioId: 'acct-growth',
      asOf: `2026-03-${day}`,
      payload: { level: 'warning', episode_state: 'open', text: `acct-growth: alert ${id}` },
    });
  }
  await db.run("update alerts set delivered_at = now(), attempts = 1 where alert_id = 'delivered-1'");
  await db.run("update alerts set attempts = $1, last_error = 'webhook: webhook answered HTTP 503' where alert_id = 'given-up-2'", [
    ALERT_RETRY_DEFAULTS.maxAttempts,
  ]);
}

const fileIds = (file: string) =>
  existsSync(file) ? readFileSync(file, 'utf8').trim().split('\n').filter(Boolean).map((l) => (JSON.parse(l) as { alert_id: string }).alert_id) : [];

describe('riskfold alerts', () => {
  let ws: TempWorkspace | undefined;
  let worker: RunningCli | undefined;
  afterEach(async () => {
    if (worker && worker.child.exitCode === null) {
      worker.child.kill('SIGTERM');
      await worker.exited;
    }
    worker = undefined;
    ws?.cleanup();
  });

  it('lists the undelivered alerts and re-arms the one that used up maxAttempts when no worker runs', async () => {
    ws = await tempWorkspace();
    await outbox(ws.db);
    ws.closeDb();
    const listed = runCli(['alerts', '--undelivered', '--format', 'json', '--config', ws.config.configPath]);
    expect(listed.status).toBe(0);
    const rows = JSON.parse(listed.stdout) as { alert_id: string; attempts: number; level: string; episode_state: string }[];
    expect(rows.map((r) => [r.alert_id, r.attempts, r.level, r.episode_state])).toEqual([
      ['waiting-3', 0, 'warning', 'open'],
      ['given-up-2', ALERT_RETRY_DEFAULTS.maxAttempts, 'warning', 'open'],
    ]);

    const retried = runCli(['alerts', 'retry', 'no-such-alert', 'given-up-2', '--config', ws.config.configPath]);
    expect(retried.status).toBe(0);
    expect(retried.stdout).toBe('re-armed 1 alert: 2 delivered, 0 still undelivered\nnot undelivered (unknown or already delivered): no-such-alert\n');
    expect(fileIds(ws.config.alerts.file!).sort()).toEqual(['given-up-2', 'waiting-3']);
    expect(runCli(['alerts', '--undelivered', '--config', ws.config.configPath]).stdout).toBe('no alerts\n');
  });

  it('hands the retry to a running worker through a request file, and the worker delivers it', async () => {
    ws = await tempWorkspace();
    await outbox(ws.db);
    ws.closeDb();
    // the worker in a process of its own, as in production: it holds DuckDB's lock on the file
    worker = startCli(['watch', '--config', ws.config.configPath]);
    // the worker delivers what is due at its start; the given-up alert stays out
    await waitFor(() => fileIds(ws!.config.alerts.file!).includes('waiting-3'), 20_000, 'the due alert delivered');
    expect(fileIds(ws.config.alerts.file!)).not.toContain('given-up-2');

    const retried = runCli(['alerts', 'retry', '--config', ws.config.configPath]);
    expect(retried.status).toBe(0);
    expect(retried.stdout).toMatch(/^the worker holds .*: retry requested \(retry-\d+-\d+\.json\)/);
    await waitFor(() => fileIds(ws!.config.alerts.file!).includes('given-up-2'), 20_000, 'the re-armed alert delivered');
  });
});
