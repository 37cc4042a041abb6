import { readFileSync, rmSync, writeFileSync } from 'node:fs';
import { hostname } from 'node:os';
import type { Config } from '../config/load.ts';

/** Who runs the worker: written beside the database so a second start can name the owner. */
export interface WorkerInfo {
  pid: number;
  startedAt: string;
  host: string;
}

export function pidFilePath(config: Config): string {
  return `${config.database}.worker.pid`;
}

export function writePidFile(config: Config): WorkerInfo {
  const info: WorkerInfo = { pid: process.pid, startedAt: new Date().toISOString(), host: hostname() };
  writeFileSync(pidFilePath(config), `${JSON.stringify(info)}\n`);
  return info;
}

/** The recorded owner, or null if there is no file or it is not ours to read. */
export function readPidFile(config: Config): WorkerInfo | null {
  try {
    const info = JSON.parse(readFileSync(pidFilePath(config), 'utf8')) as WorkerInfo;
    return Number.isInteger(info.pid) ? info : null;
  } catch {
    return null;
  }
}

/** Removes the file if it is still this process's (a killed worker's stale file is overwritten at the next start). */
export function removePidFile(config: Config): void {
  if (readPidFile(config)?.pid === process.pid) rmSync(pidFilePath(config), { force: true });
}

/**
 * "pid 4242 on host-a, started 2026-12-01T21:55:00.000Z". DuckDB's lock error names the
 * pid that holds the file; the pid file adds when it started, if it is the same process
 * (the holder may also be a one-off `ingest`).
 */
export function describeOwner(config: Config, lockMessage: string): string {
  const info = readPidFile(config);
  const lockPid = /PID (\d+)/i.exec(lockMessage)?.[1];
  if (info && (lockPid === undefined || Number(lockPid) === info.pid)) {
    return `pid ${info.pid} on ${info.host}, started ${info.startedAt}`;
  }
  return lockPid ? `pid ${lockPid}` : 'pid unknown';
}
