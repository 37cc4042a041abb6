import { createRequire } from 'node:module';
import pino, { type Logger, type DestinationStream } from 'pino';

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

/** pino-pretty's factory: a stream that turns pino's JSON lines (already redacted) into readable ones. */
type PrettyFactory = (options: Record<string, unknown>) => DestinationStream;

function stderrStream(): DestinationStream {
  const pretty = process.stderr.isTTY ? loadPretty() : null;
  if (pretty === null) return pino.destination(2);
  // sync: a command that exits right after its last line must not lose it
  return pretty({ destination: 2, sync: true, colorize: true, translateTime: 'SYS:yyyy-mm-dd HH:MM:ss', ignore: 'pid,hostname,app' });
}

/** pino-pretty if installed; without it a terminal gets JSON lines too. */
function loadPretty(): PrettyFactory | null {
  try {
    return createRequire(import.meta.url)('pino-pretty') as PrettyFactory;
  } catch (err) {
    if ((err as NodeJS.ErrnoException).code === 'MODULE_NOT_FOUND') return null;
    throw err;
  }
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
