import { existsSync, writeFileSync } from 'node:fs';
import { afterEach, describe, expect, it } from 'vitest';
import { describeHolder, pidFilePath, readPidFile, removePidFile, writePidFile } from '../../src/worker/workerPidFile.ts';
import { workerDir, type WorkerDir } from '../helpers/workspace.ts';

// DuckDB 1.5's lock error, as printed by a real refusal on Linux (path and pid vary)
const lockError = (pid: number) =>
  `IO Error: Could not set lock on file "/x/riskfold.duckdb": Conflicting lock is held in /usr/bin/node (PID ${pid}). See also https://duckdb.org/docs/stable/connect/concurrency`;

describe('the worker pid file', () => {
  let wd: WorkerDir | undefined;
  afterEach(() => wd?.cleanup());

  it('names the worker and its start when the lock holder is the pid in the file', () => {
    wd = workerDir();
    const info = writePidFile(wd.config);
    expect(describeHolder(wd.config, lockError(process.pid))).toBe(
      `a riskfold worker already owns ${wd.config.database} (pid ${process.pid} on ${info.host}, started ${info.startedAt})`,
    );
  });

  it('does not call a one-off holder a worker when the file names another (stale) pid', () => {
    wd = workerDir();
    writeFileSync(pidFilePath(wd.config), JSON.stringify({ pid: 1, startedAt: '2026-01-01T00:00:00.000Z', host: 'h' }));
    expect(describeHolder(wd.config, lockError(4242))).toMatch(/^another process holds .* \(pid 4242; not a worker/);
  });

  it('removes only its own file', () => {
    wd = workerDir();
    writeFileSync(pidFilePath(wd.config), JSON.stringify({ pid: 1, startedAt: '2026-01-01T00:00:00.000Z', host: 'h' }));
    removePidFile(wd.config);
    expect(readPidFile(wd.config)?.pid).toBe(1);
    writePidFile(wd.config);
    removePidFile(wd.config);
    expect(existsSync(pidFilePath(wd.config))).toBe(false);
  });
});
