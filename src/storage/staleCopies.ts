import { readdirSync, rmSync } from 'node:fs';
import path from 'node:path';
import type { Logger } from 'pino';
import type { Config } from '../config/load.ts';
import { spareOf } from './diskRoom.ts';

/**
 * Removes temporary read copies (`<readCopy>.tmp-<pid>`, and the spare's link
 * `<readCopy>.spare.next`) a killed publish left behind. Only the process holding the
 * database publishes, so at its start every one is stale. The spare stays: the next
 * publish compares every block of it, so even one a kill left half-updated is made whole.
 */
export function removeStaleReadCopies(config: Config, log: Logger): string[] {
  const dir = path.dirname(config.readCopy);
  const prefix = `${path.basename(config.readCopy)}.tmp-`;
  const link = `${path.basename(spareOf(config.readCopy))}.next`;
  const stale = readdirSync(dir)
    .filter((n) => n.startsWith(prefix) || n === link)
    .map((n) => path.join(dir, n));
  for (const file of stale) rmSync(file, { force: true });
  if (stale.length > 0) log.info({ stage: 'storage', removed: stale }, 'removed temporary read copies left by an interrupted publish');
  return stale;
}
