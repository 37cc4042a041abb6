import { existsSync, readFileSync } from 'node:fs';
import { afterEach, describe, expect, it } from 'vitest';
import { deliverAlerts, retryDelayMs } from '../../src/alerts/deliverAlerts.ts';
import { insertAlert } from '../../src/alerts/outbox.ts';
import type { ConfigInput } from '../../src/config/schema.ts';
import type { Database } from '../../src/storage/database.ts';
import { waitFor } from '../helpers/wait.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';
import { startReceiver, type Receiver } from './receiver.ts';

const TOKEN_ENV = 'RISKFOLD_TEST_WEBHOOK_TOKEN';
const TOKEN = 'tok-7f3a9c1e-never-in-a-log';
const NOW = new Date('2026-03-09T22:00:00Z');
const at = (ms: number) => new Date(NOW.getTime() + ms);

async function raise(db: Database, n: number): Promise<string[]> {
  const ids: string[] = [];
  for (let i = 1; i <= n; i++) {
    const alertId = `breach-${i}-limit_opened-2026-03-0${i + 1}`;
    await insertAlert(db, {
      alertId,
      kind: 'limit_opened',
      portfolioId: 'acct-growth',
      asOf: `2026-03-0${i + 1}`,
      breachId: i,
      payload: { portfolio: 'acct-growth', level: 'warning', episode_state: 'open', text: `acct-growth: test alert ${i}` },
    });
    ids.push(alertId);
  }
  return ids;
}

/** JSON Lines (jsonlines.org): every line one JSON value, '\n' terminated. */
function fileLines(path: string): Record<string, unknown>[] {
  if (!existsSync(path)) return [];
  const text = readFileSync(path, 'utf8');
  expect(text === '' || text.endsWith('\n')).toBe(true);
  return text
    .split('\n')
    .filter(Boolean)
    .map((l) => JSON.parse(l) as Record<string, unknown>);
}

describe('deliverAlerts', () => {
  let ws: TempWorkspace | undefined;
  let receiver: Receiver | undefined;
  afterEach(async () => {
    ws?.cleanup();
    await receiver?.close();
    delete process.env[TOKEN_ENV];
  });

  async function setup(webhook: Partial<NonNullable<NonNullable<ConfigInput['alerts']>['webhook']>> = {}) {
    receiver = await startReceiver();
    process.env[TOKEN_ENV] = TOKEN;
    ws = await tempWorkspace({
      alerts: {
        file: 'alerts.jsonl',
        webhook: { url: receiver.url, tokenEnv: TOKEN_ENV, timeoutMs: 2000, retryBaseMs: 60_000, retryMaxMs: 180_000, ...webhook },
      },
    });
    return { ws, receiver, file: ws.config.alerts.file! };
  }

  it('sends each alert to the log, the JSON Lines file and the webhook with a bearer token (RFC 6750) that no log line shows', async () => {
    const { ws, receiver, file } = await setup();
    const ids = await raise(ws.db, 2);
    const summary = await deliverAlerts(ws.db, ws.config, ws.log, { clock: () => NOW });

    expect(summary).toEqual({ delivered: 2, failed: 0, pending: 0, nextAttemptAt: null });
    expect(receiver.received.map((r) => r.body.alert_id)).toEqual(ids);
    expect(receiver.received.map((r) => r.headers.authorization)).toEqual([`Bearer ${TOKEN}`, `Bearer ${TOKEN}`]);
    expect(receiver.received[0].headers['content-type']).toBe('application/json');
    expect(receiver.received[0].body).toMatchObject({
      kind: 'limit_opened',
      portfolio_id: 'acct-growth',
      as_of: '2026-03-02',
      payload: { level: 'warning', text: 'acct-growth: test alert 1' },
    });
    expect(fileLines(file).map((l) => l.alert_id)).toEqual(ids);
    const logged = ws.logLines().filter((l) => l.alert_id !== undefined && l.kind === 'limit_opened');
    expect(logged.map((l) => l.msg)).toEqual(['acct-growth: test alert 1', 'acct-growth: test alert 2']);
    expect(JSON.stringify(ws.logLines())).not.toContain(TOKEN);

    const rows = await ws.db.all<{ delivered_at: string | null; attempts: number }>('select delivered_at, attempts from alerts');
    expect(rows.every((r) => r.delivered_at !== null && r.attempts === 1)).toBe(true);
    expect(await deliverAlerts(ws.db, ws.config, ws.log, { clock: () => at(1000) })).toEqual({ delivered: 0, failed: 0, pending: 0, nextAttemptAt: null });
    expect(receiver.received).toHaveLength(2);
  });

  it('retries a failing webhook with doubling waits, writes the file line once, and loses nothing', async () => {
    const { ws, receiver, file } = await setup();
    const [id] = await raise(ws.db, 1);
    receiver.answers.push(500, 503);
    const state = () =>
      ws.db.all<{ attempts: number; last_error: string | null; next_ms: string | null; delivered_at: string | null }>(
        'select attempts, last_error, epoch_ms(next_attempt_at) as next_ms, delivered_at from alerts',
      );

    expect(await deliverAlerts(ws.db, ws.config, ws.log, { clock: () => NOW })).toEqual({ delivered: 0, failed: 1, pending: 1, nextAttemptAt: at(60_000).toISOString() });
    expect((await state())[0]).toMatchObject({ attempts: 1, last_error: 'webhook: webhook answered HTTP 500', delivered_at: null });
    expect(Number((await state())[0].next_ms)).toBe(at(60_000).getTime());

    // not due yet: nothing is sent
    await deliverAlerts(ws.db, ws.config, ws.log, { clock: () => at(59_999) });
    expect(receiver.received).toHaveLength(1);

    expect((await deliverAlerts(ws.db, ws.config, ws.log, { clock: () => at(60_000) })).failed).toBe(1);
    expect(Number((await state())[0].next_ms)).toBe(at(60_000 + 120_000).getTime());

    expect(await deliverAlerts(ws.db, ws.config, ws.log, { clock: () => at(180_000) })).toEqual({ delivered: 1, failed: 0, pending: 0, nextAttemptAt: null });
    expect((await state())[0]).toMatchObject({ attempts: 3, last_error: null });
    // at least once: three POSTs of the same alert; the receiver de-duplicates by alert_id
    expect(receiver.received.map((r) => r.body.alert_id)).toEqual([id, id, id]);
    expect(new Set(receiver.received.map((r) => r.body.alert_id)).size).toBe(1);
    expect(fileLines(file).map((l) => l.alert_id)).toEqual([id]);
    expect(JSON.stringify(ws.logLines())).not.toContain(TOKEN);
  });

  it('gives up on a webhook that does not answer within timeoutMs, then recovers', async () => {
    const { ws, receiver } = await setup({ timeoutMs: 200 });
    await raise(ws.db, 1);
    receiver.answers.push('hang');
    const started = Date.now();
    expect((await deliverAlerts(ws.db, ws.config, ws.log, { clock: () => NOW })).failed).toBe(1);
    expect(Date.now() - started).toBeLessThan(2000);
    const [row] = await ws.db.all<{ last_error: string }>('select last_error from alerts');
    expect(row.last_error).toBe('webhook: no answer from the webhook within 200 ms');
    expect((await deliverAlerts(ws.db, ws.config, ws.log, { clock: () => at(60_000) })).delivered).toBe(1);
  });

  it('stops retrying after maxAttempts but keeps the alert visible as undelivered', async () => {
    const { ws, receiver } = await setup({ maxAttempts: 2 });
    await raise(ws.db, 1);
    receiver.answers.push(500, 500, 500);
    await deliverAlerts(ws.db, ws.config, ws.log, { clock: () => NOW });
    await deliverAlerts(ws.db, ws.config, ws.log, { clock: () => at(60_000) });
    expect(await deliverAlerts(ws.db, ws.config, ws.log, { clock: () => at(10_000_000) })).toEqual({ delivered: 0, failed: 0, pending: 1, nextAttemptAt: null });
    expect(receiver.received).toHaveLength(2);
    expect(ws.logLines().some((l) => l.level === 50 && /given up/.test(String(l.msg)))).toBe(true);
  });

  it('does not send without its token and says which environment variable is missing', async () => {
    const { ws, receiver } = await setup();
    delete process.env[TOKEN_ENV];
    await raise(ws.db, 1);
    await deliverAlerts(ws.db, ws.config, ws.log, { clock: () => NOW });
    const [row] = await ws.db.all<{ last_error: string }>('select last_error from alerts');
    expect(row.last_error).toBe(`webhook: environment variable ${TOKEN_ENV} (the webhook token) is not set`);
    expect(receiver.received).toHaveLength(0);
  });

  it('runs calls made at the same time one after another, so nothing is sent twice', async () => {
    const { ws, receiver, file } = await setup();
    const ids = await raise(ws.db, 3);
    const first = deliverAlerts(ws.db, ws.config, ws.log, { clock: () => NOW });
    // made before the first pass started: they join it and share its summary
    const joined = [deliverAlerts(ws.db, ws.config, ws.log, { clock: () => NOW }), deliverAlerts(ws.db, ws.config, ws.log, { clock: () => NOW })];
    await waitFor(() => receiver.received.length > 0, 5000, 'the first POST');
    // made while the first pass runs: it waits for it and finds nothing left to send
    const later = deliverAlerts(ws.db, ws.config, ws.log, { clock: () => NOW });
    const results = await Promise.all([first, ...joined, later]);
    expect(results).toEqual([
      { delivered: 3, failed: 0, pending: 0, nextAttemptAt: null },
      { delivered: 3, failed: 0, pending: 0, nextAttemptAt: null },
      { delivered: 3, failed: 0, pending: 0, nextAttemptAt: null },
      { delivered: 0, failed: 0, pending: 0, nextAttemptAt: null },
    ]);
    expect(receiver.received.map((r) => r.body.alert_id)).toEqual(ids);
    expect(fileLines(file)).toHaveLength(3);
  });

  it('resolves with a failure, not a rejection, when the webhook is unreachable', async () => {
    const { ws, receiver } = await setup();
    await receiver.close();
    await raise(ws.db, 1);
    const summary = await deliverAlerts(ws.db, ws.config, ws.log, { clock: () => NOW });
    expect(summary).toEqual({ delivered: 0, failed: 1, pending: 1, nextAttemptAt: at(60_000).toISOString() });
    const [row] = await ws.db.all<{ last_error: string }>('select last_error from alerts');
    expect(row.last_error).toMatch(/^webhook: webhook not reached \(fetch failed: .*ECONNREFUSED/);
  });
  it('counts the backoff from the failure, not from the start of the delivery round', async () => {
    const { ws, receiver } = await setup();
    await raise(ws.db, 1);
    receiver.answers.push(500);
    // the round starts at NOW; the failing send takes 5 s on this clock
    let calls = 0;
    await deliverAlerts(ws.db, ws.config, ws.log, { clock: () => (calls++ === 0 ? NOW : at(5000)) });
    const [row] = await ws.db.all<{ next_ms: string }>('select epoch_ms(next_attempt_at) as next_ms from alerts');
    expect(Number(row.next_ms)).toBe(at(5000 + 60_000).getTime());
  });

  it('keeps a token with CR/LF out of the request, last_error and the log', async () => {
    const { ws, receiver } = await setup();
    const token = 'abcd1234secret\r\nX-Injected: tail5678part';
    process.env[TOKEN_ENV] = token;
    await raise(ws.db, 1);
    expect((await deliverAlerts(ws.db, ws.config, ws.log, { clock: () => NOW })).failed).toBe(1);
    expect(receiver.received).toHaveLength(0);
    const [row] = await ws.db.all<{ last_error: string }>('select last_error from alerts');
    expect(row.last_error).toBe(`webhook: environment variable ${TOKEN_ENV} holds characters a bearer token cannot have (RFC 6750 section 2.1); not sent`);
    const logged = JSON.stringify(ws.logLines());
    for (const piece of ['abcd1234secret', 'X-Injected', 'tail5678part']) expect(logged).not.toContain(piece);
  });
});

describe('retryDelayMs', () => {
  // exponential backoff capped at a maximum: common practice, no source
  it('doubles from the base after each failure and stops at the cap', () => {
    const retry = { retryBaseMs: 30_000, retryMaxMs: 3_600_000 };
    expect([1, 2, 3, 4, 8, 9, 20].map((n) => retryDelayMs(n, retry))).toEqual([
      30_000, 60_000, 120_000, 240_000, 3_600_000, 3_600_000, 3_600_000,
    ]);
  });
});
