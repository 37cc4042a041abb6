import cliProgress from 'cli-progress';
import type { Logger } from 'pino';

/**
 * Progress of a long recompute: a bar on stderr when a person is watching (a TTY),
 * otherwise an info line about every 10% or every few seconds, so a backfill under a
 * service manager still shows it is alive. Short runs stay quiet.
 */
export interface Progress {
  advance(units?: number): void;
  finish(): void;
}

export interface ProgressOptions {
  /** Below this many units no progress is shown at all. */
  minUnits?: number;
  /** At most this long between log lines (ms). */
  intervalMs?: number;
  isTty?: boolean;
  now?: () => number;
}

export function startProgress(log: Logger, total: number, label: string, options: ProgressOptions = {}): Progress {
  const minUnits = options.minUnits ?? 50;
  if (total < minUnits) return { advance: () => undefined, finish: () => undefined };
  const isTty = options.isTty ?? process.stderr.isTTY === true;
  if (isTty) {
    const bar = new cliProgress.SingleBar(
      { stream: process.stderr, format: `${label} [{bar}] {percentage}% | {value}/{total} | eta {eta_formatted}`, hideCursor: true },
      cliProgress.Presets.shades_classic,
    );
    bar.start(total, 0);
    let done = 0;
    return {
      advance: (units = 1) => bar.update((done += units)),
      finish: () => bar.stop(),
    };
  }
  const now = options.now ?? Date.now;
  const intervalMs = options.intervalMs ?? 5000;
  let done = 0;
  let lastShare = 0;
  let lastAt = now();
  return {
    advance: (units = 1) => {
      done += units;
      const share = Math.floor((done / total) * 10);
      if (share > lastShare || now() - lastAt >= intervalMs) {
        lastShare = share;
        lastAt = now();
        log.info({ done, total, percent: Math.round((done / total) * 100) }, `${label}: ${Math.round((done / total) * 100)}%`);
      }
    },
    finish: () => undefined,
  };
}
