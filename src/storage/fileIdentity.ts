import { statSync, type Stats } from 'node:fs';

/** The file's stat, or null when there is none (or it cannot be read). */
export function statOrNull(p: string): Stats | null {
  try {
    return statSync(p);
  } catch {
    return null;
  }
}

/** Whether two stats are of the same file: the same inode on the same device (hard links included). */
export function sameInode(a: { dev: number; ino: number }, b: { dev: number; ino: number }): boolean {
  return a.dev === b.dev && a.ino === b.ino;
}
