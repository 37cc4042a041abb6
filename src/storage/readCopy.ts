import { execFile } from 'node:child_process';
import { existsSync, linkSync, renameSync, rmSync, statSync, truncateSync } from 'node:fs';
import { availableParallelism } from 'node:os';
import path from 'node:path';
import { promisify } from 'node:util';
import type { Logger } from 'pino';
import type { Config } from '../config/load.ts';
import { faultPoint } from '../faults.ts';
import type { Database } from './database.ts';
import { bytesToPublish, freeBytes, sizeOrZero, spareOf } from './diskRoom.ts';
import { heldByAnyProcess } from './fileHolders.ts';
import { sameInode, statOrNull } from './fileIdentity.ts';

const execFileAsync = promisify(execFile);

/** Whether the read copy now holds the latest commit; if not, why, in one line. */
export type PublishOutcome = { published: true } | { published: false; reason: string };

/**
 * Publishes the read copy: checkpoint, a file equal to the database under another name,
 * rename over the read copy. Readers of the old copy keep their open file; a reader
 * never sees a half-written copy. The file is the spare (the copy before the current
 * one) brought up to date block by block when no process has it open (`heldByAnyProcess`:
 * a reader of an older copy still holds it), else a fresh whole copy: a new day rewrites
 * a few percent of the database's blocks, so writing only those costs a fraction of
 * writing the whole file. The copy it replaces becomes the spare. Needs room for one copy
 * (`bytesToPublish`, less the spare's size when it is updated): when the disk has less,
 * the spare goes first, then the old copy if that makes room (readers find no copy until
 * the rename), else nothing is touched and the outcome says why; the commits are safe
 * either way and the next publish catches up. Call only between transactions (the
 * worker's queue guarantees it).
 */
export async function publishReadCopy(db: Database, config: Config, log: Logger): Promise<PublishOutcome> {
  // force: wait for a short write on another connection (alert delivery) instead of failing
  await db.run('force checkpoint');
  const plan = planPublish(config, log);
  if (plan.short !== null) return { published: false, reason: plan.short };
  const target = plan.inPlace ? spareOf(config.readCopy) : `${config.readCopy}.tmp-${process.pid}`;
  let written: number;
  try {
    written = await copyInChildProcess(plan.inPlace ? 'update' : 'copy', config.database, target);
    faultPoint('copied');
    swapIn(target, config, log);
  } catch (err) {
    // a full disk must not leave a stray copy behind, nor a half-updated spare
    rmSync(target, { force: true });
    if (err instanceof CopyFailed && err.noSpace) return { published: false, reason: `read copy not published: ${err.message}; ${COMMITTED}` };
    throw err;
  }
  rmSync(`${config.readCopy}.wal`, { force: true });
  log.debug({ stage: 'storage', readCopy: config.readCopy, inPlace: plan.inPlace, bytesWritten: written }, 'read copy published');
  return { published: true };
}

interface PublishPlan {
  /** Update the spare rather than copy the whole file. */
  inPlace: boolean;
  /** Null when there is room; else the one-line reason there is not. */
  short: string | null;
}

/** In place when the spare is free and fits; else a whole copy, dropping the spare, then the old copy, if that makes room. */
function planPublish(config: Config, log: Logger): PublishPlan {
  const dir = path.dirname(config.readCopy);
  const spare = spareOf(config.readCopy);
  const needed = bytesToPublish(sizeOrZero(config.database));
  let free = freeBytes(dir, config.readCopy);
  const spareStat = statOrNull(spare);
  const spareBytes = spareStat?.size ?? 0;
  // never the read copy's own file (a hard link made by hand): its readers would see the writes
  const copyStat = statOrNull(config.readCopy);
  const ownFile = spareStat !== null && copyStat !== null && sameInode(spareStat, copyStat);
  const usable = spareBytes > 0 && !ownFile && heldByAnyProcess(spare) === false;
  if (usable && free + spareBytes >= needed) return { inPlace: true, short: null };
  if (existsSync(spare)) {
    rmSync(spare, { force: true }); // a reader still holding it keeps its blocks until it closes it
    free = freeBytes(dir, config.readCopy);
  }
  if (free >= needed) return { inPlace: false, short: null };
  const old = sizeOrZero(config.readCopy);
  if (old > 0 && free + old >= needed) {
    rmSync(config.readCopy, { force: true });
    rmSync(`${config.readCopy}.wal`, { force: true });
    log.warn({ stage: 'storage', readCopy: config.readCopy, freeBytes: free, neededBytes: needed }, 'disk short: old read copy removed to make room for the new one');
    free = freeBytes(dir, config.readCopy);
    if (free >= needed) return { inPlace: false, short: null };
  }
  return { inPlace: false, short: `read copy not published: ${mib(free)} free in ${dir}, a copy of the database needs ${mib(needed)}; ${COMMITTED}` };
}

/**
 * `fresh` becomes the read copy and the copy it replaces the spare, each by a rename:
 * a hard link keeps the old copy while the new one takes its name. Without hard links
 * (some network file systems) no spare is kept, and every publish copies in whole.
 */
function swapIn(fresh: string, config: Config, log: Logger): void {
  const spare = spareOf(config.readCopy);
  const next = `${spare}.next`; // removed at start if a kill leaves it (staleCopies.ts)
  rmSync(next, { force: true });
  let kept = false;
  if (existsSync(config.readCopy)) {
    try {
      linkSync(config.readCopy, next);
      kept = true;
    } catch (err) {
      log.debug({ stage: 'storage', err: (err as Error).message }, 'no hard link for the spare read copy: the next publish copies in whole');
    }
  }
  renameSync(fresh, config.readCopy);
  if (kept) renameSync(next, spare);
  else rmSync(spare, { force: true });
}

const COMMITTED = 'everything is committed, the copy follows once there is room';
const mib = (bytes: number) => `${Math.max(0, Math.floor(bytes / 1024 / 1024))} MiB`;

/** The copy failed; `noSpace` when the disk (or a quota) filled up under it. */
class CopyFailed extends Error {
  constructor(
    message: string,
    readonly noSpace: boolean,
  ) {
    super(message);
  }
}

/**
 * DuckDB's lock on its file is a POSIX record lock, and the kernel drops such a lock when
 * the owning process closes ANY descriptor of that file: a copyFileSync here would end
 * the worker's lock and let a second writer in. A child's open and close leave it alone;
 * it prints the bytes it wrote, and reports a failure as the error's code and message on
 * one line. An update runs one child per core over its share of the file: reading both
 * files from the page cache is most of its time. Returns the bytes written.
 */
async function copyInChildProcess(how: 'copy' | 'update', from: string, to: string): Promise<number> {
  try {
    if (how === 'copy') return Number((await execFileAsync(process.execPath, ['-e', COPY_SCRIPT, from, to])).stdout);
    const size = statSync(from).size; // stat opens no descriptor
    truncateSync(to, size);
    const parts = shares(size, Math.min(availableParallelism(), 4));
    const outs = await Promise.all(parts.map(([lo, hi]) => execFileAsync(process.execPath, ['-e', UPDATE_SCRIPT, from, to, String(lo), String(hi)])));
    return outs.reduce((sum, o) => sum + Number(o.stdout), 0);
  } catch (err) {
    const said = String((err as { stderr?: unknown }).stderr ?? (err as { code?: unknown }).code ?? '').trim();
    const [code = '', ...rest] = said.split(' ');
    const detail = rest.join(' ') || (err as Error).message.split('\n')[0];
    throw new CopyFailed(`${how === 'copy' ? 'copying' : 'updating'} ${from} to ${to} failed: ${detail}`, code === 'ENOSPC' || code === 'EDQUOT');
  }
}

/** [from, to) byte ranges splitting `size` into `n` shares on MiB boundaries. */
function shares(size: number, n: number): [number, number][] {
  const step = Math.ceil(size / n / CHUNK) * CHUNK || CHUNK;
  const out: [number, number][] = [];
  for (let lo = 0; lo < size; lo += step) out.push([lo, Math.min(size, lo + step)]);
  return out;
}

const CHUNK = 1 << 20;
const FAILED = `catch (e) { process.stderr.write(String(e.code) + " " + String(e.message).split("\\n")[0]); process.exit(1); }`;

// COPYFILE_FICLONE: a reflink where the file system has them (XFS, Btrfs, APFS), so the
// copy costs no time whatever the database's size; elsewhere (ext4) a plain copy
const COPY_SCRIPT = `try { const fs = require("node:fs"); fs.copyFileSync(process.argv[1], process.argv[2], fs.constants.COPYFILE_FICLONE);
process.stdout.write(String(fs.statSync(process.argv[2]).size)); } ${FAILED}`;

// each MiB of the database's bytes [lo, hi) compared with the spare's, written only where they differ
const UPDATE_SCRIPT = `try { const fs = require("node:fs"); const [, , lo, hi] = process.argv.slice(1).map(Number);
const from = fs.openSync(process.argv[1], "r"), to = fs.openSync(process.argv[2], "r+");
const a = Buffer.allocUnsafe(${CHUNK}), b = Buffer.allocUnsafe(${CHUNK}); let written = 0;
for (let at = lo; at < hi; at += ${CHUNK}) { const n = fs.readSync(from, a, 0, Math.min(${CHUNK}, hi - at), at); const m = fs.readSync(to, b, 0, n, at);
  if (m !== n || a.compare(b, 0, n, 0, n) !== 0) { fs.writeSync(to, a, 0, n, at); written += n; } }
fs.closeSync(to); fs.closeSync(from); process.stdout.write(String(written)); } ${FAILED}`;
