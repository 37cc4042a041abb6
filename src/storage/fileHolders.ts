import { readdirSync, readFileSync, statSync, type Stats } from 'node:fs';
import { sameInode, statOrNull } from './fileIdentity.ts';

/**
 * Whether any process has `file` open or locked: true, false, or null when this system
 * cannot tell (no Linux /proc). Two sources, either one enough to say yes: /proc/locks
 * lists every POSIX and flock lock of every user (a DuckDB reader holds a shared lock on
 * its file for as long as it is open), and /proc/<pid>/fd shows the open files of the
 * processes this user may look into (a reader that takes no lock, such as a copy).
 * A lock on another file with the same inode number, on another disk, also says yes:
 * a wrong yes only costs a full copy.
 */
export function heldByAnyProcess(file: string): boolean | null {
  const target = statOrNull(file);
  if (target === null) return false; // no file, no holder
  let locks: string;
  try {
    locks = readFileSync('/proc/locks', 'utf8');
  } catch {
    return null;
  }
  // "1: POSIX  ADVISORY  READ 26153 fe:00:2156174 0 EOF" (a waiter's line has "->" after the number)
  for (const [, inode] of locks.matchAll(/ [0-9a-f]+:[0-9a-f]+:(\d+) /g)) if (Number(inode) === target.ino) return true;
  return openInAnyProcess(target);
}

function openInAnyProcess(target: Stats): boolean {
  for (const pid of readdirSync('/proc')) {
    if (!/^\d+$/.test(pid)) continue;
    let fds: string[];
    try {
      fds = readdirSync(`/proc/${pid}/fd`);
    } catch {
      continue; // another user's process, or gone
    }
    for (const fd of fds) {
      try {
        if (sameInode(statSync(`/proc/${pid}/fd/${fd}`), target)) return true;
      } catch {
        // closed meanwhile
      }
    }
  }
  return false;
}
