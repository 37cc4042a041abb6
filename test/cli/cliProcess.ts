import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import path from 'node:path';

export const CLI = path.resolve(import.meta.dirname, '../../bin/riskfold.js');

export interface RunningCli {
  child: ChildProcess;
  /** JSON log lines the child has written to stderr so far (other lines are kept as { text }). */
  logLines: () => Record<string, unknown>[];
  exited: Promise<{ code: number | null; signal: NodeJS.Signals | null }>;
}

/**
 * Starts `riskfold <args>` as a real child process, the way a user or a supervisor would;
 * `wrapper` is a command that ends by exec'ing the rest (so the child's pid is the worker's).
 */
export function startCli(args: string[], env: NodeJS.ProcessEnv = {}, wrapper: string[] = []): RunningCli {
  const [command, ...rest] = [...wrapper, process.execPath, CLI, ...args];
  const child = spawn(command, rest, { env: { ...process.env, ...env }, stdio: ['ignore', 'pipe', 'pipe'] });
  let stderr = '';
  child.stderr!.on('data', (chunk: Buffer) => (stderr += chunk.toString()));
  child.stdout!.resume();
  const exited = new Promise<{ code: number | null; signal: NodeJS.Signals | null }>((resolve) =>
    child.on('exit', (code, signal) => resolve({ code, signal })),
  );
  const logLines = () =>
    stderr
      .split('\n')
      .filter(Boolean)
      .map((l) => {
        try {
          return JSON.parse(l) as Record<string, unknown>;
        } catch {
          return { text: l };
        }
      });
  return { child, logLines, exited };
}

/** Ends a child a test left running (SIGKILL: the test is over) and waits for its exit; nothing for one already gone. */
export async function endCli(c: RunningCli | undefined): Promise<void> {
  if (c === undefined) return;
  if (c.child.exitCode === null && c.child.signalCode === null) c.child.kill('SIGKILL');
  await c.exited;
}

/** Runs a one-off command to completion (sql, status); killed after `timeoutMs` so a hang fails the test instead of stalling it. */
export function runCli(args: string[], timeoutMs = 60_000, env: NodeJS.ProcessEnv = {}): { status: number | null; stdout: string; stderr: string } {
  const r = spawnSync(process.execPath, [CLI, ...args], { encoding: 'utf8', timeout: timeoutMs, killSignal: 'SIGKILL', env: { ...process.env, ...env } });
  return { status: r.status, stdout: r.stdout, stderr: r.stderr };
}
