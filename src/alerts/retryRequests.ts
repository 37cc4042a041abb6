import { mkdirSync, readdirSync, readFileSync, renameSync, rmSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import type { Logger } from 'pino';
import type { Config } from '../config/load.ts';
import type { RearmOutcome } from './rearm.ts';

/**
 * `riskfold alerts retry` while a worker owns the database: the command cannot write it,
 * so it leaves a request file beside the database and the worker carries it out between
 * batches. A request is written under a temporary name and renamed, so the worker never
 * reads half of one.
 */
export function requestFolder(config: Config): string {
  return `${config.database}.requests`;
}

export function writeRetryRequest(config: Config, ids: readonly string[]): string {
  const folder = requestFolder(config);
  mkdirSync(folder, { recursive: true });
  const name = `retry-${Date.now()}-${process.pid}.json`;
  const temporary = path.join(folder, `.${name}.tmp`);
  writeFileSync(temporary, `${JSON.stringify({ ids })}\n`);
  renameSync(temporary, path.join(folder, name));
  return name;
}

/** The requests waiting, oldest first, each removed as it is taken; an unreadable one is dropped with its reason. */
export function takeRetryRequests(config: Config): { name: string; ids: string[] | null; error?: string }[] {
  const folder = requestFolder(config);
  let names: string[];
  try {
    names = readdirSync(folder).filter((n) => /^retry-.*\.json$/.test(n)).sort();
  } catch {
    return [];
  }
  return names.map((name) => {
    const file = path.join(folder, name);
    try {
      const { ids } = JSON.parse(readFileSync(file, 'utf8')) as { ids?: unknown };
      if (!Array.isArray(ids) || !ids.every((id) => typeof id === 'string')) return { name, ids: null, error: 'ids is not a list of strings' };
      return { name, ids };
    } catch (err) {
      return { name, ids: null, error: (err as Error).message };
    } finally {
      rmSync(file, { force: true });
    }
  });
}

const POLL_MS = 1000;

/**
 * In the worker: looks for retry requests every second and hands each one's ids to
 * `carryOut` (which re-arms them between batches); one at a time, in order.
 */
export function watchRetryRequests(config: Config, log: Logger, carryOut: (ids: string[]) => Promise<RearmOutcome>): { stop(): void } {
  const rlog = log.child({ stage: 'alerts' });
  let busy = false;
  const timer = setInterval(() => {
    if (busy) return;
    busy = true;
    void (async () => {
      for (const request of takeRetryRequests(config)) {
        if (request.ids === null) {
          rlog.error({ request: request.name, error: request.error }, 'alert retry request unreadable; ignored');
          continue;
        }
        const outcome = await carryOut(request.ids);
        rlog.info({ request: request.name, ...outcome }, 'alert retry request carried out');
      }
    })()
      .catch((err: unknown) => rlog.error({ err }, 'alert retry request failed'))
      .finally(() => (busy = false));
  }, POLL_MS);
  timer.unref();
  return { stop: () => clearInterval(timer) };
}
