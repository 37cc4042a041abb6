import pino, { type Logger, type DestinationStream } from 'pino';
import pretty from 'pino-pretty';

export type { Logger };

/** Paths pino blanks out wherever they appear: secrets are redacted by configuration. */
export const REDACT_PATHS = ['token', '*.token', 'authorization', '*.authorization', 'headers.authorization', '*.headers.authorization'];

/**
 * One root logger per process; stages take `log.child({ stage })`. Logs go to stderr
 * (stdout is kept for command output) unless a stream is given (tests): readable lines
 * when stderr is a terminal, JSON lines otherwise (a file, a pipe, a log collector).
 */
export function createLogger(options: { level?: string; stream?: DestinationStream } = {}): Logger {
  const level = options.level ?? process.env.RISKFOLD_LOG_LEVEL ?? 'info';
  return pino(
    { level, base: { app: 'riskfold' }, redact: { paths: REDACT_PATHS, censor: '[redacted]' } },
    options.stream ?? stderrStream(),
  );
}

function stderrStream(): DestinationStream {
  if (!process.stderr.isTTY) return pino.destination(2);
  // sync: a command that exits right after its last line must not lose it
  return pretty({ destination: 2, sync: true, colorize: true, translateTime: 'SYS:yyyy-mm-dd HH:MM:ss', ignore: 'pid,hostname,app' });
}

/** A logger that keeps its lines in memory, for tests that assert on log records. */
export function memoryLogger(level = 'debug'): { log: Logger; lines: () => Record<string, unknown>[] } {
  const chunks: string[] = [];
  const stream = { write: (s: string) => void chunks.push(s) };
  return {
    log: createLogger({ level, stream }),
    lines: () =>
      chunks
        .join('')
        .split('\n')
        .filter(Boolean)
        .map((l) => JSON.parse(l) as Record<string, unknown>),
  };
}
