import type { DuckDBConnection, DuckDBValue } from '@duckdb/node-api';
import { DuckDBInstance } from './duckdbApi.ts';
import { RiskfoldError } from '../errors.ts';

export type Row = Record<string, unknown>;
export type Params = DuckDBValue[] | Record<string, DuckDBValue>;

/**
 * A DuckDB file opened by this process. `all()` returns JSON-friendly rows (dates as
 * 'YYYY-MM-DD', BIGINT as string, doubles as numbers); bulk readers use `conn` directly
 * for columnar access.
 */
export interface Database {
  readonly path: string;
  readonly readOnly: boolean;
  readonly conn: DuckDBConnection;
  all<T = Row>(sql: string, params?: Params): Promise<T[]>;
  run(sql: string, params?: Params): Promise<void>;
  /** Runs fn inside BEGIN/COMMIT; ROLLBACK and rethrow on any error. Not re-entrant. */
  transaction<T>(fn: () => Promise<T>): Promise<T>;
  /**
   * A second connection on the same file, with its own transactions: work that runs
   * beside the worker's queue (alert delivery) must never join a transaction open on
   * `conn`. Its close() disconnects only that connection.
   */
  openSession(): Promise<Database>;
  close(): void;
}

/** The config's `engine` section: DuckDB's memory ceiling and thread count for this process. */
export interface EngineSettings {
  memoryLimit: string;
  threads?: number;
}

export interface OpenOptions {
  readOnly?: boolean;
  /** Absent: DuckDB's own defaults (80% of RAM, one thread per core). */
  engine?: EngineSettings;
}

export async function openDatabase(path: string, options: OpenOptions = {}): Promise<Database> {
  const readOnly = options.readOnly ?? false;
  let instance: DuckDBInstance;
  try {
    instance = await DuckDBInstance.create(path, instanceOptions(readOnly, options.engine));
  } catch (cause) {
    const text = String((cause as Error).message);
    if (/lock/i.test(text)) {
      throw new RiskfoldError(
        'database_locked',
        `${path} is held by another process (${pidIn(text)}); while a riskfold worker runs, read its published copy or let the worker do the writing`,
        { file: path, cause },
      );
    }
    throw cause;
  }
  const conn = await instance.connect();
  return wrapConnection(instance, conn, path, readOnly, () => instance.closeSync());
}

function wrapConnection(
  instance: DuckDBInstance,
  conn: DuckDBConnection,
  path: string,
  readOnly: boolean,
  closeOwner: () => void,
): Database {
  let inTransaction = false;
  const db: Database = {
    path,
    readOnly,
    conn,
    async all<T>(sql: string, params?: Params) {
      const reader = await conn.runAndReadAll(sql, params);
      return reader.getRowObjectsJson() as T[];
    },
    async run(sql: string, params?: Params) {
      await conn.run(sql, params);
    },
    async transaction<T>(fn: () => Promise<T>) {
      if (inTransaction) throw new Error('nested transaction');
      inTransaction = true;
      await conn.run('BEGIN TRANSACTION');
      try {
        const out = await fn();
        await conn.run('COMMIT');
        return out;
      } catch (err) {
        await conn.run('ROLLBACK').catch(() => undefined);
        throw err;
      } finally {
        inTransaction = false;
      }
    },
    async openSession() {
      const session = await instance.connect();
      return wrapConnection(instance, session, path, readOnly, () => undefined);
    },
    close() {
      conn.closeSync();
      closeOwner();
    },
  };
  return db;
}

/** Set when the instance is created, so they hold before the first query (the same as SET memory_limit / threads). */
function instanceOptions(readOnly: boolean, engine: EngineSettings | undefined): Record<string, string> {
  const options: Record<string, string> = {};
  if (readOnly) options.access_mode = 'READ_ONLY';
  if (engine) options.memory_limit = engine.memoryLimit;
  if (engine?.threads !== undefined) options.threads = String(engine.threads);
  return options;
}

function pidIn(message: string): string {
  const m = /PID (\d+)/i.exec(message);
  return m ? `pid ${m[1]}` : 'another process';
}

/** Quotes a string as a SQL literal, for the few places DuckDB takes no parameter (read_csv options). */
export function sqlString(value: string): string {
  return `'${value.replaceAll("'", "''")}'`;
}
