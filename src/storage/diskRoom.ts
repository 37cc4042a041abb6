import { readFileSync, statfsSync } from 'node:fs';
import { statOrNull } from './fileIdentity.ts';

/**
 * Room left for the commits that follow a publish: a twentieth of the database, at least
 * 32 MiB, so a copy never takes the last bytes the next file's load needs.
 */
export function bytesToPublish(databaseBytes: number): number {
  return databaseBytes + Math.max(Math.ceil(databaseBytes / 20), 32 * 1024 * 1024);
}

/**
 * Free bytes for an unprivileged writer on the file system holding `dir`. Tests set
 * RISKFOLD_FAULT_DISK_ROOM to a file holding a byte count: the disk then has that much
 * room besides the database, less what the read copy at `readCopy` and its spare take
 * (so dropping one frees its size, as on a real disk); no disk is filled.
 */
export function freeBytes(dir: string, readCopy: string): number {
  const room = process.env.RISKFOLD_FAULT_DISK_ROOM;
  if (room !== undefined) return Number(readFileSync(room, 'utf8')) - sizeOrZero(readCopy) - sizeOrZero(spareOf(readCopy));
  const fs = statfsSync(dir);
  return fs.bavail * fs.bsize;
}

/**
 * The copy published before the current one, kept to be brought up to date in place by
 * the next publish (src/storage/readCopy.ts).
 */
export const spareOf = (readCopy: string) => `${readCopy}.spare`;

export function sizeOrZero(file: string): number {
  return statOrNull(file)?.size ?? 0;
}
