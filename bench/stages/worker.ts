import { spawn, type ChildProcess } from 'node:child_process';
import { createWriteStream, existsSync, readFileSync, statSync } from 'node:fs';
import { once } from 'node:events';
import path from 'node:path';
import type { Config } from '../../src/config/load.ts';
import { openDatabase, sqlString } from '../../src/storage/database.ts';
import { waitFor } from '../../test/helpers/wait.ts';
import { figure, unavailable, type Figure } from '../figures.ts';
import type { GeneratedScenario } from '../generate.ts';
import { median, peakResidentBytes, phaseMedians } from '../measure.ts';
import { createBenchWorkspace, dropIntoInbox } from '../workspace.ts';

const PROJECT_ROOT = path.resolve(import.meta.dirname, '../..');
const BIN = path.join(PROJECT_ROOT, 'bin', 'riskfold.js');
const POLL_MS = 50;
const STOP_TIMEOUT_MS = 15_000;
// only guards against a hung worker: a slow stage must show up as a slow figure, not a timeout
const CATCH_UP_TIMEOUT_MS = 4 * 3_600_000;
const DAY_TIMEOUT_MS = 3_600_000;

/** Where a batch of files stands, as the worker's published read copy shows it. */
interface Progress {
  seen: number;
  ingested: number;
  problems: string | null;
  firstReceivedMs: number | null;
  /** The covering run: started after the last file was received, done. */
  runStartedMs: number | null;
  finishedMs: number | null;
  /** Runs started since the first file was received (1 when the worker batched the day's files). */
  runsSinceFirst: number;
  running: number;
  riskRows: number;
}

/**
 * The worker as a user runs it (`riskfold watch` in its own process, started through
 * bin/riskfold.js so its pid is the worker's): the history files wait in the inbox, so
 * it first catches up (ingest and full backfill), then each new day's files are dropped
 * and timed until the read copy shows the day's risk rows from a run that started after
 * the last file was ingested. The peak memory is read from /proc before it is stopped.
 */
export async function measureWorker(scenario: GeneratedScenario, root: string): Promise<Figure[]> {
  const size = scenario.size.name;
  const ws = createBenchWorkspace(root, 'worker', scenario.size);
  for (const file of scenario.history) dropIntoInbox(file.path, ws.config.inbox);
  const logFile = path.join(ws.dir, 'worker.log');
  const started = Date.now();
  const child = spawn(process.execPath, [BIN, 'watch', '--config', ws.configPath], {
    cwd: PROJECT_ROOT,
    env: { ...process.env, RISKFOLD_LOG_LEVEL: process.env.RISKFOLD_LOG_LEVEL ?? 'info' },
    stdio: ['ignore', 'pipe', 'pipe'],
  });
  const exit = watchExit(child, logFile);
  try {
    const lastHistoryDate = scenario.historyDates.at(-1)!;
    await settle(ws.config, scenario.history.map((f) => path.basename(f.path)), lastHistoryDate, exit, CATCH_UP_TIMEOUT_MS);
    const catchUpEnd = Date.now();
    const catchUpSeconds = (catchUpEnd - started) / 1000;

    const visible: number[] = [];
    const committed: number[] = [];
    // where a day's time goes: the stable-file wait, ingest, recompute, publishing the read copy
    const phases = { wait: [] as number[], ingest: [] as number[], recompute: [] as number[], publish: [] as number[] };
    const runsPerDay: number[] = [];
    for (const day of scenario.newDays) {
      const dropped = Date.now();
      for (const file of day.files) dropIntoInbox(file.path, ws.config.inbox);
      const done = await settle(ws.config, day.files.map((f) => path.basename(f.path)), day.date, exit, DAY_TIMEOUT_MS);
      const seen = Date.now();
      visible.push((seen - dropped) / 1000);
      committed.push((done.finishedMs! - dropped) / 1000);
      phases.wait.push((done.firstReceivedMs! - dropped) / 1000);
      phases.ingest.push((done.runStartedMs! - done.firstReceivedMs!) / 1000);
      phases.recompute.push((done.finishedMs! - done.runStartedMs!) / 1000);
      phases.publish.push((seen - done.finishedMs!) / 1000);
      runsPerDay.push(done.runsSinceFirst);
    }
    const peak = child.pid === undefined ? null : peakResidentBytes(child.pid);
    const days = scenario.newDays.length;
    const latency = figure('new_day_latency_seconds', size, visible, {
      note: `median of ${days} days (prices, fx, positions files each), until visible in the read copy`,
      details: {
        committed_seconds: median(committed),
        // the stable-file wait (watch.stableMs) and the arrival window (watch.settleMs, or wholeDaySettleMs for a whole day)
        wait_seconds: median(phases.wait),
        // with more than one run per day, this phase also holds the earlier runs
        ingest_seconds: median(phases.ingest),
        recompute_seconds: median(phases.recompute),
        publish_seconds: median(phases.publish),
        runs_per_day: Math.max(...runsPerDay),
        stable_ms_setting: ws.config.watch.stableMs,
        whole_day_settle_ms_setting: ws.config.watch.wholeDaySettleMs,
      },
    });
    const memory =
      peak === null
        ? unavailable('worker_peak_memory_mib', 'no /proc/<pid>/status on this system')
        : figure('worker_peak_memory_mib', size, [peak / 2 ** 20], {
            note: 'one worker from start: history catch-up (ingest + backfill) and the new days',
            details: { catch_up_seconds: catchUpSeconds },
          });
    memory.details.stop = await stop(child, exit);
    Object.assign(
      latency.details,
      phaseMedians(timingsAfter(logFile, catchUpEnd, 'batch done', 'seconds'), 'batch'),
      phaseMedians(timingsAfter(logFile, catchUpEnd, 'recompute done', 'phases'), 'run'),
    );
    return [latency, memory];
  } finally {
    await stop(child, exit);
  }
}

/** Resolves with the last lines of output once the worker exits; its output also goes to a log file. */
function watchExit(child: ChildProcess, logFile: string): { done: boolean; tail: string[]; promise: Promise<number | null> } {
  const log = createWriteStream(logFile);
  const state = { done: false, tail: [] as string[], promise: Promise.resolve<number | null>(null) };
  const keep = (chunk: Buffer) => {
    log.write(chunk);
    state.tail.push(...chunk.toString('utf8').split('\n').filter(worthShowing));
    state.tail.splice(0, Math.max(0, state.tail.length - 5));
  };
  child.stdout?.on('data', keep);
  child.stderr?.on('data', keep);
  state.promise = once(child, 'exit').then(async ([code]) => {
    state.done = true;
    log.end();
    await once(log, 'finish');
    return code as number | null;
  });
  return state;
}

/**
 * The timings (`field`) of the worker's `msg` log records after `sinceMs`: the runs'
 * `phases` of "recompute done", the batches' `seconds` (ingest, run, deliver, publish) of "batch done".
 */
function timingsAfter(logFile: string, sinceMs: number, msg: string, field: string): Record<string, number>[] {
  const out: Record<string, number>[] = [];
  for (const line of readFileSync(logFile, 'utf8').split('\n')) {
    if (!line.includes(`"${msg}"`)) continue;
    const record = JSON.parse(line) as Record<string, unknown> & { time: number };
    const timings = record[field] as Record<string, number> | undefined;
    if (record.time >= sinceMs && timings) out.push(timings);
  }
  return out;
}

/** Plain lines (the CLI's one-line failure) and pino records of level warn (40) and up. */
function worthShowing(line: string): boolean {
  if (!line.trim()) return false;
  try {
    return (JSON.parse(line) as { level?: number }).level! >= 40;
  } catch {
    return true;
  }
}

/** Waits until the named files are ingested and a finished run after them shows risk rows on `date`. */
async function settle(
  config: Config,
  names: string[],
  date: string,
  exit: { done: boolean; tail: string[] },
  timeoutMs: number,
): Promise<Progress> {
  // the read copy changes only when the worker publishes it: opening it on every poll
  // would take a share of the 2 cores from the worker being timed, for nothing new
  let lastRead: string | null = null;
  const result = await waitFor(
    async () => {
      if (exit.done) return { failed: `the worker exited: ${exit.tail.join(' | ') || 'no output'}` };
      const published = publishedVersion(config.readCopy);
      if (published === null || published === lastRead) return null;
      lastRead = published;
      const p = await progress(config, names, date);
      if (p === null) return null;
      if (p.seen === names.length && p.ingested < names.length) return { failed: `not ingested: ${p.problems}` };
      const done = p.ingested === names.length && p.finishedMs !== null && p.running === 0 && p.riskRows > 0;
      return done ? { progress: p } : null;
    },
    timeoutMs,
    `the worker to finish ${names.join(', ')}`,
    POLL_MS,
  );
  if ('failed' in result) throw new Error(result.failed);
  return result.progress;
}

/** The read copy's file identity: each publish renames a new or updated file into place. Null: none yet. */
function publishedVersion(readCopy: string): string | null {
  try {
    const s = statSync(readCopy);
    return `${s.ino}:${s.size}:${s.mtimeMs}`;
  } catch {
    return null;
  }
}

async function progress(config: Config, names: string[], date: string): Promise<Progress | null> {
  if (!existsSync(config.readCopy)) return null;
  const db = await openDatabase(config.readCopy, { readOnly: true });
  try {
    const [row] = await db.all<Progress>(`
      with batch as (
        select * from ingested_files where name in (${names.map(sqlString).join(', ')})
      ), summary as (
        select count(*)::integer as seen,
               count(*) filter (where status = 'ingested')::integer as ingested,
               string_agg(case when status <> 'ingested' then name || ': ' || coalesce(error, status) end, '; ') as problems,
               min(received_at) as first_received,
               max(received_at) as last_received
        from batch
      )
      select seen, ingested, problems,
             epoch_ms(first_received)::double as "firstReceivedMs",
             (select epoch_ms(min(r.started_at))::double from risk_runs r
               where r.status = 'done' and r.started_at >= summary.last_received) as "runStartedMs",
             (select epoch_ms(max(r.finished_at))::double from risk_runs r
               where r.status = 'done' and r.started_at >= summary.last_received) as "finishedMs",
             (select count(*) from risk_runs r where r.started_at >= summary.first_received)::integer as "runsSinceFirst",
             (select count(*) from risk_runs where status = 'running')::integer as running,
             (select count(*) from risk_daily where date = ${sqlString(date)}::date)::integer as "riskRows"
      from summary`);
    return row;
  } finally {
    db.close();
  }
}

/** SIGTERM (the worker stops cleanly), SIGKILL to that same pid only if it hangs; says which it took. */
async function stop(child: ChildProcess, exit: { done: boolean; promise: Promise<number | null> }): Promise<string> {
  if (exit.done) return `already exited with ${await exit.promise}`;
  child.kill('SIGTERM');
  let killed = false;
  const timer = setTimeout(() => {
    killed = true;
    child.kill('SIGKILL');
  }, STOP_TIMEOUT_MS);
  const code = await exit.promise;
  clearTimeout(timer);
  return killed ? `no exit ${STOP_TIMEOUT_MS / 1000} s after SIGTERM: killed` : `exit code ${code} after SIGTERM`;
}
