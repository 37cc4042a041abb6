import { lstatSync, readdirSync, statSync } from 'node:fs';
import path from 'node:path';
import type { Config } from '../config/load.ts';
import { matchSource } from '../ingest/sourceMatch.ts';

/**
 * Whether a name in the inbox is a delivery. Hidden files and names ending in .tmp or
 * .part are a sender's work in progress (many transfer tools write there, then rename);
 * a `.reason.txt` is ingest's note beside a quarantined file, copied back with it.
 */
export function isDeliveryName(name: string): boolean {
  return !name.startsWith('.') && !/\.(tmp|part)$/i.test(name) && !/\.reason\.txt$/i.test(name);
}

/** A regular file, not a symlink: the worker moves what it ingests and must not move a link's target away from its owner. */
export function isPlainFile(file: string): boolean {
  try {
    return lstatSync(file).isFile();
  } catch {
    return false;
  }
}

/** The delivery a companion file (a done-marker `<name>.done`, a manifest `<name>.manifest`; `suffixes` from the config) stands for, else null. */
export function companionOf(name: string, suffixes: readonly string[]): string | null {
  const suffix = suffixes.find((s) => name.endsWith(s) && name.length > s.length);
  return suffix === undefined ? null : name.slice(0, -suffix.length);
}

/** The deliveries already in the inbox, oldest first (name breaks ties), for the catch-up at start; companion files are not deliveries. */
export function listInbox(inbox: string, companions: readonly string[] = []): string[] {
  const files = readdirSync(inbox, { withFileTypes: true })
    .filter((d) => d.isFile() && isDeliveryName(d.name) && companionOf(d.name, companions) === null)
    .map((d) => {
      const file = path.join(inbox, d.name);
      return { file, mtime: statSync(file).mtimeMs };
    });
  files.sort((a, b) => a.mtime - b.mtime || a.file.localeCompare(b.file));
  return files.map((f) => f.file);
}

/**
 * Resolves once the file's size and mtime have held for `stableMs` (true), or false if
 * it disappears. The same rule chokidar's awaitWriteFinish applies to new arrivals.
 */
export async function waitUntilStable(file: string, stableMs: number, pollMs: number): Promise<boolean> {
  let last = '';
  let since = Date.now();
  for (;;) {
    let now: string;
    try {
      const s = statSync(file);
      now = `${s.size}:${s.mtimeMs}`;
    } catch {
      return false;
    }
    if (now !== last) {
      last = now;
      since = Date.now();
    } else if (Date.now() - since >= stableMs) {
      return true;
    }
    await new Promise((resolve) => setTimeout(resolve, pollMs));
  }
}

/**
 * Whether `files` hold a whole business day: a file of every kind the day needs
 * (`schedule.missingData.expect`, the same list the missing-data check judges a day by).
 * With no kind expected no batch counts as whole.
 */
export function holdsWholeDay(config: Config, files: readonly string[]): boolean {
  const expected = config.schedule.missingData.expect;
  if (expected.length === 0) return false;
  const kinds = new Set(files.map((file) => matchSource(config.sources, path.basename(file))?.kind));
  return expected.every((kind) => kinds.has(kind));
}
