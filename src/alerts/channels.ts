import { appendFile, mkdir, open } from 'node:fs/promises';
import path from 'node:path';
import type { Logger } from 'pino';
import type { Config } from '../config/load.ts';
import { isBearerToken } from './redact.ts';

/** What every channel receives: the alert row, payload parsed. */
export interface AlertMessage {
  alert_id: string;
  kind: string;
  portfolio_id: string | null;
  as_of: string | null;
  /** ISO 8601, UTC */
  created_at: string;
  payload: Record<string, unknown>;
}

export interface Channel {
  name: 'log' | 'file' | 'webhook';
  /** Resolves once the channel has the alert; rejects with a one-line reason (never a secret). */
  send(message: AlertMessage): Promise<void>;
}

/** The secrets a channel may hold right now (the webhook token): no message may show them. */
export function channelSecrets(config: Config): (string | undefined)[] {
  const env = config.alerts.webhook?.tokenEnv;
  return env === undefined ? [] : [process.env[env]];
}

/** Whether alerts reach anyone but the log: an alerts file or a webhook is configured. */
export function hasOutsideChannel(config: Config): boolean {
  return config.alerts.file !== undefined || config.alerts.webhook !== undefined;
}

/** The log always, then the alerts file and the webhook if configured. */
export function configuredChannels(config: Config, log: Logger): Channel[] {
  const channels: Channel[] = [logChannel(log)];
  if (config.alerts.file !== undefined) channels.push(fileChannel(config.alerts.file));
  if (config.alerts.webhook !== undefined) channels.push(webhookChannel(config.alerts.webhook));
  return channels;
}

function logChannel(log: Logger): Channel {
  return {
    name: 'log',
    async send(m) {
      log.warn({ alert_id: m.alert_id, kind: m.kind, portfolio_id: m.portfolio_id, as_of: m.as_of }, String(m.payload.text));
    },
  };
}

/**
 * JSON Lines (one JSON object per line, UTF-8, '\n'; jsonlines.org). A crash between
 * the append and its record in alert_deliveries leaves that alert's line last in the
 * file, so a retry that finds it there does not write it twice.
 */
export function fileChannel(file: string): Channel {
  return {
    name: 'file',
    async send(m) {
      const tail = await lastLine(file);
      if (tail.line !== null && alertIdOf(tail.line) === m.alert_id) return;
      await mkdir(path.dirname(file), { recursive: true });
      // a torn last line (crash mid-write) stays on its own line instead of swallowing this one
      await appendFile(file, `${tail.endsWithNewline ? '' : '\n'}${JSON.stringify(m)}\n`, 'utf8');
    },
  };
}

const TAIL_BYTES = 64 * 1024;

async function lastLine(file: string): Promise<{ line: string | null; endsWithNewline: boolean }> {
  let handle;
  try {
    handle = await open(file, 'r');
  } catch (err) {
    if ((err as NodeJS.ErrnoException).code === 'ENOENT') return { line: null, endsWithNewline: true };
    throw err;
  }
  try {
    const { size } = await handle.stat();
    if (size === 0) return { line: null, endsWithNewline: true };
    const length = Math.min(size, TAIL_BYTES);
    const buffer = Buffer.alloc(length);
    await handle.read(buffer, 0, length, size - length);
    const text = buffer.toString('utf8');
    const lines = text.split('\n').filter((l) => l.length > 0);
    return { line: lines.length > 0 ? lines[lines.length - 1] : null, endsWithNewline: text.endsWith('\n') };
  } finally {
    await handle.close();
  }
}

function alertIdOf(line: string): string | null {
  try {
    const value = JSON.parse(line) as { alert_id?: unknown };
    return typeof value.alert_id === 'string' ? value.alert_id : null;
  } catch {
    return null;
  }
}

type WebhookConfig = NonNullable<Config['alerts']['webhook']>;

/**
 * HTTP POST of the alert as JSON. The bearer token (RFC 6750) is read from the
 * environment at each send, so a rotated token needs no restart; it goes into the
 * Authorization header only, never into an error message or a log line.
 */
export function webhookChannel(webhook: WebhookConfig): Channel {
  return {
    name: 'webhook',
    async send(m) {
      const headers: Record<string, string> = { 'content-type': 'application/json' };
      if (webhook.tokenEnv !== undefined) {
        const token = process.env[webhook.tokenEnv];
        if (!token) throw new Error(`environment variable ${webhook.tokenEnv} (the webhook token) is not set`);
        if (!isBearerToken(token)) {
          throw new Error(`environment variable ${webhook.tokenEnv} holds characters a bearer token cannot have (RFC 6750 section 2.1); not sent`);
        }
        headers.authorization = `Bearer ${token}`;
      }
      const controller = new AbortController();
      const timer = setTimeout(() => controller.abort(), webhook.timeoutMs);
      let status: number;
      try {
        const response = await fetch(webhook.url, { method: 'POST', headers, body: JSON.stringify(m), signal: controller.signal });
        status = response.status;
        await response.arrayBuffer();
      } catch (err) {
        if (controller.signal.aborted) throw new Error(`no answer from the webhook within ${webhook.timeoutMs} ms`);
        const cause = (err as Error).cause instanceof Error ? `: ${((err as Error).cause as Error).message}` : '';
        throw new Error(`webhook not reached (${(err as Error).message}${cause})`);
      } finally {
        clearTimeout(timer);
      }
      if (status < 200 || status >= 300) throw new Error(`webhook answered HTTP ${status}`);
    },
  };
}
