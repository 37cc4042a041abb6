import { copyFileSync, constants, existsSync, linkSync, mkdirSync, unlinkSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { fileLine, formatRejection, type Rejection } from '../errors.ts';
import { faultPoint } from '../faults.ts';

/** `archive/2026-04-12/`: the folder of the day the file was received (local date). */
export function archiveDir(archiveRoot: string, receivedAt: Date): string {
  return path.join(archiveRoot, localDay(receivedAt));
}

/** 'YYYY-MM-DD' of the local calendar day. */
export function localDay(d: Date): string {
  return [d.getFullYear(), d.getMonth() + 1, d.getDate()].map((n) => String(n).padStart(2, '0')).join('-');
}

/** `prices.csv.gz` -> `prices-2.csv.gz`: the number goes before the extensions, so the kind's pattern still matches. */
export function withSuffix(name: string, n: number): string {
  if (n === 0) return name;
  const m = /^(.+?)((\.[A-Za-z]+)?\.(gz|zst|bz2))$/i.exec(name) ?? /^(.+?)(\.[^.]*)?$/.exec(name);
  const stem = m?.[1] ?? name;
  const ext = m?.[2] ?? '';
  return `${stem}-${n}${ext}`;
}

/** The first name in `dir` not taken yet: `name`, `name-1`, `name-2`, ... */
export function freePath(dir: string, name: string): string {
  for (let n = 0; ; n++) {
    const candidate = path.join(dir, withSuffix(name, n));
    if (!existsSync(candidate)) return candidate;
  }
}

/**
 * Moves `from` into `dir` under `name` (or the next free suffix), never over an existing
 * file: a hard link fails rather than replaces, and the source is removed only once
 * the link (or, across file systems, an exclusive copy) exists.
 */
export function moveWithoutOverwrite(from: string, dir: string, name: string): string {
  mkdirSync(dir, { recursive: true });
  for (let n = 0; ; n++) {
    const target = path.join(dir, withSuffix(name, n));
    try {
      linkSync(from, target);
    } catch (err) {
      const code = (err as NodeJS.ErrnoException).code;
      if (code === 'EEXIST') continue;
      if (code !== 'EXDEV' && code !== 'EPERM' && code !== 'ENOTSUP') throw err;
      try {
        copyFileSync(from, target, constants.COPYFILE_EXCL);
      } catch (copyErr) {
        if ((copyErr as NodeJS.ErrnoException).code === 'EEXIST') continue;
        throw copyErr;
      }
    }
    faultPoint('linked');
    unlinkSync(from);
    return target;
  }
}

/** The reason file's last line: what to do, depending on where the fix belongs. */
const NEXT_STEP: Record<NonNullable<Rejection['fixIn']>, string> = {
  file: 'Fix the file and drop it into the inbox again; nothing of it was loaded.',
  config:
    'The fix belongs in the config, not in the file (see the hint): change the config, restart the worker if one runs, then move this file back into the inbox; nothing of it was loaded.',
  either: 'Fix the file, or the config if the hint fits the sender, then drop the file into the inbox again; nothing of it was loaded.',
};

/**
 * Writes `<target>.reason.txt` for a rejected file about to be moved to `target`: the
 * note is there before the file, so a kill never leaves a quarantined file without one.
 */
export function writeReasonFile(target: string, rejection: Rejection, receivedAt: Date): void {
  const lines = [
    `file:     ${rejection.file}`,
    `received: ${receivedAt.toISOString()}`,
    `reason:   ${formatRejection(rejection)}`,
    `code:     ${rejection.code}`,
    rejection.row !== undefined ? `line:     ${fileLine(rejection)} (the header is line 1)` : null,
    rejection.column !== undefined ? `column:   ${rejection.column}` : null,
    rejection.value !== undefined ? `value:    "${rejection.value}"` : null,
    rejection.expected !== undefined ? `expected: ${rejection.expected}` : null,
    rejection.hint !== undefined ? `hint:     ${rejection.hint}` : null,
    '',
    NEXT_STEP[rejection.fixIn ?? 'file'],
  ];
  mkdirSync(path.dirname(target), { recursive: true });
  writeFileSync(`${target}.reason.txt`, `${lines.filter((l) => l !== null).join('\n')}\n`);
}
