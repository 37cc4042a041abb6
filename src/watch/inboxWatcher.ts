import { existsSync } from 'node:fs';
import path from 'node:path';
import { watch, type FSWatcher } from 'chokidar';
import type { Logger } from 'pino';
import type { Config } from '../config/load.ts';
import { companionSuffixes } from '../ingest/completeness.ts';
import { companionOf, isDeliveryName, isPlainFile } from './inboxFiles.ts';

/**
 * Watches the inbox (not its subfolders) and calls `onFile` once per delivery, after its
 * size has held for `watch.stableMs`: a file written slowly in chunks is announced once,
 * complete; `onGone` when a name leaves it (a hold may be over). Resolves when chokidar
 * has read the folder, so nothing written after this point is missed.
 */
export async function watchInbox(config: Config, log: Logger, onFile: (file: string) => void, onGone: () => void = () => undefined): Promise<FSWatcher> {
  const wlog = log.child({ stage: 'watch' });
  const inbox = path.resolve(config.inbox);
  const watcher = watch(inbox, {
    ignoreInitial: true, // the worker lists what is already there itself, in a known order
    depth: 0,
    followSymlinks: false,
    // with atomic on, a new file dropped within 100 ms of the previous one being archived
    // under the same name would be reported as a change of the old one
    atomic: false,
    awaitWriteFinish: { stabilityThreshold: config.watch.stableMs, pollInterval: config.watch.pollMs },
    ignored: (p: string) => p !== inbox && !isDeliveryName(path.basename(p)),
  });
  const companions = companionSuffixes(config);
  const announce = (file: string) => {
    if (path.dirname(file) !== inbox) return;
    // a done-marker or manifest arriving announces the delivery it stands for
    const marked = companionOf(path.basename(file), companions);
    if (marked !== null) {
      if (existsSync(path.join(inbox, marked))) announce(path.join(inbox, marked));
      return;
    }
    if (!isPlainFile(file)) {
      wlog.warn({ file: path.basename(file) }, 'not a regular file (a symlink?), left alone');
      return;
    }
    onFile(file);
  };
  // an overwrite in place after a file was announced is a new delivery under the same name
  watcher.on('add', announce).on('change', announce);
  watcher.on('unlink', (file) => path.dirname(file) === inbox && onGone());
  watcher.on('error', (err) => wlog.error({ err }, 'watcher error'));
  await new Promise<void>((resolve) => watcher.once('ready', () => resolve()));
  wlog.info({ inbox }, 'watching the inbox');
  return watcher;
}
