import pino, { type Logger, type DestinationStream } from 'pino';

export type { Logger };

/** Paths pino blanks out wherever they appear: secrets are redacted by configuration. */
export const REDACT_PATHS = ['token', '*.token', 'authorization', '*.authorization', 'headers.authorization', '*.headers.authorization'];

/**
 * One root logger per process; stages take `log.child({ stage })`. JSON lines go to
 * stderr (stdout is kept for command output) unless a stream is given (tests).
 */
export function createLogger(options: { level?: string; stream?: DestinationStream } = {}): Logger {
  const level = options.level ?? process.env.RISKFOLD_LOG_LEVEL ?? 'info';
  return pino(
    { level, base: { app: 'riskfold' }, redact: { paths: REDACT_PATHS, censor: '[redacted]' } },
    options.stream ?? pino.destination(2),
  );
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
