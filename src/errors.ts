/**
 * Errors as values. A `Rejection` is bad input (the file goes to quarantine, nothing
 * crashes); a `RiskfoldError` is a fault the user must fix (config, locked database)
 * and becomes one line on the terminal. Faults of the machine stay plain Errors.
 */

export type RejectionCode =
  | 'unknown_kind'
  | 'unreadable'
  | 'empty_file'
  | 'missing_column'
  | 'bad_value'
  | 'duplicate_key'
  | 'too_large';

export interface Rejection {
  code: RejectionCode;
  file: string;
  /** 1-based data row (the header is row 0). */
  row?: number;
  column?: string;
  value?: string;
  /** What was expected, in plain words. */
  expected?: string;
  message: string;
}

export type Result<T> = { ok: true; value: T } | { ok: false; rejection: Rejection };

/** `prices_0412.csv row 17, column price: "-3.0" is not a positive number` */
export function formatRejection(r: Rejection): string {
  const where = [r.file, r.row !== undefined ? `row ${r.row}` : undefined].filter(Boolean).join(' ');
  const col = r.column !== undefined ? `, column ${r.column}` : '';
  return `${where}${col}: ${r.message}`;
}

export type ErrorKind =
  | 'config_missing'
  | 'config_invalid'
  | 'database_locked'
  | 'usage'
  | 'query_refused'
  | 'not_found';

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
