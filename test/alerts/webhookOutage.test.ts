import { afterEach, describe, expect, it } from 'vitest';
import { deliverAlerts } from '../../src/alerts/deliverAlerts.ts';
import { insertAlert } from '../../src/alerts/outbox.ts';
import { DeliveryLoop } from '../../src/worker/deliveryLoop.ts';
import { waitFor } from '../helpers/wait.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';
import { startReceiver, type Receiver } from './receiver.ts';

const RETRY_MAX_MS = 1000;
/** Room for a delivery round on a busy machine, on top of the backoff itself. */
const SLACK_MS = 1500;

describe('webhook outage', () => {
  let ws: TempWorkspace | undefined;
  let receiver: Receiver | undefined;
  let loop: DeliveryLoop | undefined;
  afterEach(async () => {
    await loop?.stop();
    ws?.cleanup();
    await receiver?.close();
  });

  it('retries on a timer at each due time, so every alert arrives within one backoff of the webhook coming back', async () => {
    receiver = await startReceiver();
    ws = await tempWorkspace({
      alerts: { file: 'alerts.jsonl', webhook: { url: receiver.url, retryBaseMs: 100, retryMaxMs: RETRY_MAX_MS, maxAttempts: 1000 } },
    });
    const { db, config, log } = ws;
    const ids = ['outage-1', 'outage-2', 'outage-3'];
    for (const [i, id] of ids.entries()) {
      await insertAlert(db, {
        alertId: id,
        kind: 'limit_opened',
        portfolioId: 'acct-growth',
        asOf: `2026-03-0${i + 2}`,
        payload: { level: 'breach', episode_state: 'open', text: `acct-growth: alert ${id}` },
      });
    }
    receiver.down = true;
    // no periodic job here: only the loop's own timer can retry
    loop = new DeliveryLoop(() => deliverAlerts(db, config, log), () => undefined, log);
    loop.kick();
    // down long enough for the backoff to reach its cap: 100, 200, 400, 800, 1000 ms
    await waitFor(() => receiver!.received.filter((r) => r.body.alert_id === 'outage-1').length >= 6, 20_000, 'six failed attempts');
    const back = Date.now();
    receiver.down = false;

    await waitFor(() => ids.every((id) => receiver!.received.some((r) => r.body.alert_id === id && r.status === 200)), 20_000, 'every alert delivered');
    for (const id of ids) {
      const arrived = receiver.received.find((r) => r.body.alert_id === id && r.status === 200)!;
      expect(arrived.at - back, id).toBeLessThanOrEqual(RETRY_MAX_MS + SLACK_MS);
    }
    // the outbox records each delivery just after the receiver's answer
    const undelivered = async () => (await db.all<{ n: number }>('select count(*)::integer as n from alerts where delivered_at is null'))[0].n;
    await waitFor(async () => (await undelivered()) === 0, 10_000, 'the outbox recording every delivery');
  });
});
