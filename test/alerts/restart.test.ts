import { appendFileSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { deliverAlerts, deliveriesSettled } from '../../src/alerts/deliverAlerts.ts';
import { insertAlert } from '../../src/alerts/outbox.ts';
import { resolveConfig, type Config } from '../../src/config/load.ts';
import { memoryLogger } from '../../src/log/logger.ts';
import type { Database } from '../../src/storage/database.ts';
import { openWorkspace } from '../../src/storage/workspace.ts';
import { MINIMAL_CONFIG } from '../helpers/workspace.ts';
import { startReceiver, type Receiver } from './receiver.ts';

const NOW = new Date('2026-03-09T22:00:00Z');

function alert(n: number) {
  return {
    alertId: `breach-${n}-limit_opened-2026-03-06`,
    kind: 'limit_opened' as const,
    portfolioId: 'acct-income',
    asOf: '2026-03-06',
    breachId: n,
    payload: { level: 'warning', episode_state: 'open' as const, text: `acct-income: test alert ${n}` },
  };
}

describe('alert delivery across restarts and crashes', () => {
  let dir: string | undefined;
  let db: Database | undefined;
  let receiver: Receiver | undefined;
  afterEach(async () => {
    db?.close();
    db = undefined;
    await receiver?.close();
    receiver = undefined;
    if (dir) rmSync(dir, { recursive: true, force: true });
    dir = undefined;
  });

  async function open(): Promise<{ config: Config; log: ReturnType<typeof memoryLogger>['log'] }> {
    dir ??= mkdtempSync(path.join(tmpdir(), 'riskfold-alerts-'));
    receiver ??= await startReceiver();
    const config = resolveConfig(
      { ...MINIMAL_CONFIG, alerts: { file: 'alerts.jsonl', webhook: { url: receiver.url, retryBaseMs: 1000 } } },
      path.join(dir, 'pipeline.config.json'),
    );
    const { log } = memoryLogger();
    db = await openWorkspace(config, log);
    return { config, log };
  }

  async function restart() {
    await deliveriesSettled(db!);
    db!.close();
    db = undefined;
    return open();
  }

  const lines = (config: Config) => readFileSync(config.alerts.file!, 'utf8').split('\n').filter(Boolean);

  it('delivers an alert written before a restart exactly once after it', async () => {
    await open();
    await db!.transaction(() => insertAlert(db!, alert(1)));
    const { config, log } = await restart();

    expect(await deliverAlerts(db!, config, log, { clock: () => NOW })).toEqual({ delivered: 1, failed: 0, pending: 0, nextAttemptAt: null });
    const again = await restart();
    expect(await deliverAlerts(db!, again.config, again.log, { clock: () => NOW })).toEqual({ delivered: 0, failed: 0, pending: 0, nextAttemptAt: null });
    expect(receiver!.received.map((r) => r.body.alert_id)).toEqual([alert(1).alertId]);
    expect(lines(config)).toHaveLength(1);
  });

  it('does not write the file line twice after a crash between the append and its record', async () => {
    const { config, log } = await open();
    await insertAlert(db!, alert(1));
    receiver!.answers.push(500);
    await deliverAlerts(db!, config, log, { clock: () => NOW });
    // the crash: the line is in the file, its record in alert_deliveries is not
    await db!.run("delete from alert_deliveries where channel = 'file'");
    const after = await restart();

    expect((await deliverAlerts(db!, after.config, after.log, { clock: () => new Date(NOW.getTime() + 1000) })).delivered).toBe(1);
    expect(lines(config).map((l) => JSON.parse(l).alert_id)).toEqual([alert(1).alertId]);
  });

  it('keeps a torn last line apart from the next alert', async () => {
    const { config, log } = await open();
    appendFileSync(config.alerts.file!, '{"alert_id":"breach-9-limit_opened-2026-03-0');
    await insertAlert(db!, alert(2));
    await deliverAlerts(db!, config, log, { clock: () => NOW });
    const [torn, next] = lines(config);
    expect(torn).toBe('{"alert_id":"breach-9-limit_opened-2026-03-0');
    expect(JSON.parse(next).alert_id).toBe(alert(2).alertId);
  });
});
