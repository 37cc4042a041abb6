/**
 * Errors as values. A `Rejection` is bad input (the file goes to quarantine, nothing
 * crashes); a `RiskfoldError` is a fault the user must fix (config, locked database)
 * and becomes one line on the terminal. Faults of the machine stay plain Errors.
 */

export type RejectionCode =
  | 'unknown_kind'
  | 'unreadable'
  | 'empty_file'
  | 'no_header'
  | 'missing_column'
  | 'bad_value'
  | 'duplicate_key'
  | 'weight_sum'
  | 'too_large'
  | 'manifest_mismatch'
  | 'unsupported_compression'
  | 'unsupported_encoding';

export interface Rejection {
  code: RejectionCode;
  file: string;
  /** 1-based data row (the header is row 0); people are shown the file line, `fileLine()`. */
  row?: number;
  column?: string;
  value?: string;
  /** What was expected, in plain words. */
  expected?: string;
  message: string;
  /** The likely fix, when the file's shape gives it away (src/ingest/hints.ts). */
  hint?: string;
  /** Where that fix belongs: the file, the config, or either. */
  fixIn?: 'file' | 'config' | 'either';
}

/**
 * The line of the file a data row is on, as an editor counts: the header is line 1, so
 * data row n is line n + 1 (a quoted field holding a line break would shift it; DuckDB's
 * own CSV errors already count physical lines).
 */
export function fileLine(r: Pick<Rejection, 'row'>): number | undefined {
  return r.row === undefined ? undefined : r.row + 1;
}

export type Result<T> = { ok: true; value: T } | { ok: false; rejection: Rejection };

/** `prices_0412.csv line 18, column price: "-3.0" is not a positive number`, then the hint if there is one. */
export function formatRejection(r: Rejection): string {
  const line = fileLine(r);
  const where = [r.file, line !== undefined ? `line ${line}` : undefined].filter(Boolean).join(' ');
  const col = r.column !== undefined ? `, column ${r.column}` : '';
  return `${where}${col}: ${r.message}${r.hint ? `; ${r.hint}` : ''}`;
}

export type ErrorKind =
  | 'config_missing'
  | 'config_invalid'
  | 'database_locked'
  | 'usage'
  | 'query_refused'
  | 'not_found'
  | 'input_rejected'
  | 'portfolio_failed'
  | 'schema_outdated';

export class RiskfoldError extends Error {
  readonly kind: ErrorKind;
  readonly file?: string;
  constructor(kind: ErrorKind, message: string, details: { file?: string; cause?: unknown } = {}) {
    super(message, { cause: details.cause });
    this.name = 'RiskfoldError';
    this.kind = kind;
    this.file = details.file;
  }
}
