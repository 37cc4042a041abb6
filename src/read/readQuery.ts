import { DuckDBTypeId, StatementType, type DuckDBType } from '@duckdb/node-api';
import { RiskfoldError } from '../errors.ts';
import type { Database } from '../storage/database.ts';

/** A query's result as plain JSON values, columns in order; what src/cli/format.ts prints. */
export interface QueryResult {
  columns: string[];
  rows: unknown[][];
}

// Statement types that only read. DuckDB reports describe/show/summarize/pragma table_info
// and `from t` as SELECT; everything else (copy, attach, set, call, load, export) may touch
// files or settings even on a read-only database, so it is refused.
const READ_STATEMENTS = new Set<StatementType>([StatementType.SELECT, StatementType.EXPLAIN]);

/**
 * Runs one statement that must only read. The database is opened read-only as well; the
 * type check gives a clear refusal before DuckDB's own error and also stops statements
 * that write outside the database (COPY ... TO, EXPORT DATABASE, ATTACH).
 */
export async function runReadOnlyQuery(db: Database, sql: string): Promise<QueryResult> {
  const extracted = await db.conn.extractStatements(sql);
  if (extracted.count !== 1) {
    throw new RiskfoldError('query_refused', `expected exactly one SQL statement, got ${extracted.count}`);
  }
  const prepared = await extracted.prepare(0);
  if (!READ_STATEMENTS.has(prepared.statementType)) {
    const kind = StatementType[prepared.statementType] ?? String(prepared.statementType);
    throw new RiskfoldError(
      'query_refused',
      `refused: ${kind} statements may write; sql runs only reads (select, with, describe, show, summarize, explain)`,
    );
  }
  const reader = await prepared.runAndReadAll();
  return toQueryResult(reader.columnNames(), reader.columnTypes(), reader.getRowsJson());
}

/** Runs a query of our own (status) and returns it in the same printable shape. */
export async function readTable(db: Database, sql: string): Promise<QueryResult> {
  const reader = await db.conn.runAndReadAll(sql);
  return toQueryResult(reader.columnNames(), reader.columnTypes(), reader.getRowsJson());
}

/**
 * DuckDB's JSON conversion keeps BIGINT and DECIMAL as strings (they may not fit a double).
 * Where the value does fit exactly (a safe integer, a decimal of at most 15 digits), it
 * becomes a number, so `count(*)` prints as 3 and not "3"; doubles are already numbers.
 */
function toQueryResult(columns: string[], types: DuckDBType[], rows: unknown[][]): QueryResult {
  const convert = types.map(numberConverter);
  return {
    columns,
    rows: rows.map((row) => row.map((value, i) => (value === null ? null : convert[i](value)))),
  };
}

const INTEGER_TYPES = new Set<DuckDBTypeId>([DuckDBTypeId.BIGINT, DuckDBTypeId.UBIGINT, DuckDBTypeId.HUGEINT, DuckDBTypeId.UHUGEINT]);

function numberConverter(type: DuckDBType): (value: unknown) => unknown {
  if (INTEGER_TYPES.has(type.typeId)) {
    return (value) => {
      const n = Number(value);
      return Number.isSafeInteger(n) && String(n) === value ? n : value;
    };
  }
  if (type.typeId === DuckDBTypeId.DECIMAL && type.width <= 15) {
    return (value) => Number(value);
  }
  return (value) => value;
}
