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
 * Who holds the database, for the refusal of a second worker. DuckDB's lock error names
 * the pid; when the pid file names the same process it is a worker and we can say since
 * when. Otherwise a one-off command (ingest, or sql on a free file) has it open.
 */
export function describeHolder(config: Config, lockMessage: string): string {
  const info = readPidFile(config);
  const lockPid = /PID (\d+)/i.exec(lockMessage)?.[1];
  if (info && (lockPid === undefined || Number(lockPid) === info.pid)) {
    return `a riskfold worker already owns ${config.database} (pid ${info.pid} on ${info.host}, started ${info.startedAt})`;
  }
  return `another process holds ${config.database} (${lockPid ? `pid ${lockPid}` : 'pid unknown'}; not a worker, perhaps a one-off ingest or sql)`;
}
