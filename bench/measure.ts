import { readFileSync } from 'node:fs';
import os from 'node:os';
import { DuckDBInstance } from '@duckdb/node-api';

export interface MachineInfo {
  cpuModel: string;
  cores: number;
  memoryGiB: number;
  os: string;
  node: string;
  duckdb: string;
  date: string;
}

/** What the figures were measured on, so runs on different machines are not compared blindly. */
export async function machineInfo(now: Date = new Date()): Promise<MachineInfo> {
  const instance = await DuckDBInstance.create(':memory:');
  const conn = await instance.connect();
  const [row] = (await conn.runAndReadAll('select version() as v')).getRowObjectsJson();
  conn.closeSync();
  instance.closeSync();
  return {
    cpuModel: os.cpus()[0]?.model.trim() ?? 'unknown',
    cores: os.availableParallelism(),
    memoryGiB: Math.round((os.totalmem() / 2 ** 30) * 10) / 10,
    os: `${os.type()} ${os.release()} ${os.arch()}`,
    node: process.version,
    duckdb: String(row.v),
    date: now.toISOString(),
  };
}

/** Middle value (mean of the two middle ones for an even count). */
export function median(values: number[]): number {
  if (values.length === 0) throw new Error('median of no values');
  const sorted = [...values].sort((a, b) => a - b);
  const mid = sorted.length >> 1;
  return sorted.length % 2 === 1 ? sorted[mid] : (sorted[mid - 1] + sorted[mid]) / 2;
}

/**
 * Per named phase, the median seconds over runs (a phase missing from a run counts
 * as 0 there), as `<prefix>_<phase>_seconds`: where the time goes, for the owner of a stage.
 */
export function phaseMedians(runs: Record<string, number>[], prefix: string): Record<string, number> {
  const names = [...new Set(runs.flatMap((r) => Object.keys(r)))];
  return Object.fromEntries(names.map((n) => [`${prefix}_${n}_seconds`, median(runs.map((r) => r[n] ?? 0))]));
}

/** Runs fn and returns its result with the wall-clock seconds it took. */
export async function timed<T>(fn: () => Promise<T>): Promise<{ value: T; seconds: number }> {
  const start = performance.now();
  const value = await fn();
  return { value, seconds: (performance.now() - start) / 1000 };
}

/**
 * Peak resident set ("high water mark", VmHWM) of a live process in bytes, from
 * /proc/<pid>/status (Linux, see proc(5)); null where there is no /proc.
 */
export function peakResidentBytes(pid: number): number | null {
  let status: string;
  try {
    status = readFileSync(`/proc/${pid}/status`, 'utf8');
  } catch {
    return null;
  }
  const m = /^VmHWM:\s+(\d+)\s+kB$/m.exec(status);
  return m ? Number(m[1]) * 1024 : null;
}
