import type { DuckDBType, DuckDBValue } from '@duckdb/node-api';
import { DuckDBTypeId, StatementType } from '../storage/duckdbApi.ts';
import { RiskfoldError } from '../errors.ts';
import type { Database } from '../storage/database.ts';

/** How `--format table` shows a numeric column: `percent` for fractions (0.15 as 15.00%), `amount` for money. */
export type Unit = 'percent' | 'amount';

/** A query's result as plain JSON values, columns in order; what src/cli/format.ts prints. */
export interface QueryResult {
  columns: string[];
  rows: unknown[][];
  /** Per column, how a table shows it; csv and json always print the full value. */
  units?: (Unit | null)[];
  /** Per row, units replacing `units` for that row (a row whose levels are counts, not fractions); null: `units`. */
  rowUnits?: ((Unit | null)[] | null)[];
}

/** How a table shows one cell: its row's units, else its column's. */
export function unitAt(result: QueryResult, row: number, column: number): Unit | null {
  return (result.rowUnits?.[row] ?? result.units)?.[column] ?? null;
}

// Statement types that only read. DuckDB reports describe/show/summarize/pragma table_info
// and `from t` as SELECT; everything else (copy, attach, set, call, load, export) may touch
// files or settings even on a read-only database, so it is refused.
const READ_STATEMENTS = new Set<StatementType>([StatementType.SELECT, StatementType.EXPLAIN]);

// Pragmas that only describe the database; other pragmas change settings or run work.
const DESCRIBING_PRAGMA = /^pragma\s+(table_info|storage_info|show|show_tables|show_tables_expanded|database_size|database_list|version|platform)\b/i;

/**
 * Runs one statement that must only read. The database is opened read-only and locked
 * down (src/storage/readerSandbox.ts) as well. The statement is vetted from its parse
 * alone before DuckDB binds it, since binding EXPORT DATABASE already creates its
 * folder: a refused statement leaves no trace. The type check after preparing gives a
 * second, clear refusal.
 */
export async function runReadOnlyQuery(db: Database, sql: string): Promise<QueryResult> {
  try {
    return await runChecked(db, sql);
  } catch (err) {
    if (err instanceof RiskfoldError || !(err instanceof Error)) throw err;
    throw new RiskfoldError('query_refused', oneLine(err.message), { cause: err });
  }
}

/**
 * DuckDB's error in one line: its first line and hints ("Did you mean ...?") kept, the
 * echo of the query and its caret dropped (the user has the query in front of them), and
 * the client's "Failed to extract statements:" before a parser error.
 */
function oneLine(message: string): string {
  const lines = message.replace(/^Failed to extract statements: /, '').split('\n').map((l) => l.trim());
  return lines.filter((l) => l !== '' && !/^LINE \d+:/.test(l) && !/^\^+$/.test(l)).join(' ');
}

async function runChecked(db: Database, sql: string): Promise<QueryResult> {
  const extracted = await db.conn.extractStatements(sql);
  if (extracted.count !== 1) {
    throw new RiskfoldError('query_refused', `expected exactly one SQL statement, got ${extracted.count}`);
  }
  if (!(await onlyReads(db, sql.trim()))) throw refusal(/^\s*(\w+)/.exec(sql)?.[1]?.toUpperCase() ?? 'this');
  const prepared = await extracted.prepare(0);
  if (!READ_STATEMENTS.has(prepared.statementType)) throw refusal(StatementType[prepared.statementType] ?? String(prepared.statementType));
  const reader = await prepared.runAndReadAll();
  return toQueryResult(reader.columnNames(), reader.columnTypes(), reader.getRowsJson());
}

function refusal(kind: string): RiskfoldError {
  return new RiskfoldError('query_refused', `refused: ${kind} statements may write; sql runs only reads (select, with, describe, show, summarize, explain)`);
}

/**
 * From the parse, without binding: a SELECT (DuckDB serializes only those, and describe,
 * show, summarize and `from t` are SELECTs to it), an EXPLAIN of one, or a describing pragma.
 */
async function onlyReads(db: Database, text: string): Promise<boolean> {
  const explain = /^explain(\s+analyze)?\s+/i.exec(text);
  const statement = explain ? text.slice(explain[0].length) : text;
  if (!explain && DESCRIBING_PRAGMA.test(statement)) return true;
  const [{ failed }] = await db.all<{ failed: boolean }>("select (json_serialize_sql($1::varchar)::json->>'error')::boolean as failed", [statement]);
  return !failed;
}

/** Runs a query of our own (status) and returns it in the same printable shape. */
export async function readTable(db: Database, sql: string, params: DuckDBValue[] = []): Promise<QueryResult> {
  const reader = await db.conn.runAndReadAll(sql, params);
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
