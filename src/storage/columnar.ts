import type { DuckDBType, DuckDBVector } from '@duckdb/node-api';
import { DuckDBDataChunk } from './duckdbApi.ts';
import type { Database, Params } from '../storage/database.ts';
import { ensureCapacity } from './growable.ts';

/**
 * Bulk transfer between DuckDB and typed arrays, chunk by chunk (2,048 rows), so the
 * risk stage reads tens of millions of holdings without one JS object per row and
 * writes its results at appender speed.
 */

export type ColumnKind = 'int' | 'double' | 'bool' | 'text';

type ColumnOf<K extends ColumnKind> = K extends 'int'
  ? Int32Array
  : K extends 'double'
    ? Float64Array
    : K extends 'bool'
      ? Uint8Array
      : (string | null)[];

export type Columns<S extends Record<string, ColumnKind>> = { [name in keyof S]: ColumnOf<S[name]> };

/**
 * Runs `sql` and returns its columns by name as typed arrays of exactly the row count.
 * Kinds: 'int' (INTEGER, never null: a null is a fault of the query), 'double' (null
 * becomes NaN), 'bool' (1/0, null 0), 'text'. The query must select the columns in
 * the order of `spec`.
 */
export async function readColumns<S extends Record<string, ColumnKind>>(
  db: Database,
  sql: string,
  params: Params | undefined,
  spec: S,
): Promise<{ rows: number; columns: Columns<S> }> {
  const names = Object.keys(spec);
  const kinds = names.map((n) => spec[n]);
  let buffers = kinds.map((k) => allocate(k, 1 << 14));
  let rows = 0;
  await streamColumns(db, sql, params, spec, (chunk, n) => {
    buffers = buffers.map((b, c) => (Array.isArray(b) ? b : ensureCapacity(b, rows, rows + n, (size) => allocate(kinds[c], size) as typeof b)));
    names.forEach((name, c) => copyInto(buffers[c], chunk[name] as Buffer, rows, n));
    rows += n;
  });
  const columns = {} as Record<string, unknown>;
  names.forEach((name, c) => (columns[name] = buffers[c].slice(0, rows)));
  return { rows, columns: columns as Columns<S> };
}

/**
 * As `readColumns`, but hands over one chunk (at most 2,048 rows) at a time, so a
 * caller can aggregate tens of millions of rows without holding all of them. The
 * arrays passed to `onChunk` are reused for the next chunk.
 */
export async function streamColumns<S extends Record<string, ColumnKind>>(
  db: Database,
  sql: string,
  params: Params | undefined,
  spec: S,
  onChunk: (columns: Columns<S>, rows: number) => void,
): Promise<void> {
  const names = Object.keys(spec);
  const kinds = names.map((n) => spec[n]);
  const result = await db.conn.stream(sql, params);
  if (result.columnCount !== names.length) {
    throw new Error(`readColumns: query returns ${result.columnCount} columns, expected ${names.length} (${names.join(', ')})`);
  }
  let capacity = 0;
  let buffers: Buffer[] = [];
  let seen = 0;
  for (;;) {
    const chunk = await result.fetchChunk();
    if (!chunk || chunk.rowCount === 0) break;
    const n = chunk.rowCount;
    if (n > capacity) {
      capacity = n;
      buffers = kinds.map((k) => allocate(k, capacity));
    }
    for (let c = 0; c < names.length; c++) fill(kinds[c], names[c], buffers[c], chunk.getColumnVector(c), seen, n);
    const columns = {} as Record<string, unknown>;
    names.forEach((name, c) => (columns[name] = buffers[c]));
    onChunk(columns as Columns<S>, n);
    seen += n;
  }
}

type Buffer = Int32Array | Float64Array | Uint8Array | (string | null)[];

function allocate(kind: ColumnKind, n: number): Buffer {
  if (kind === 'int') return new Int32Array(n);
  if (kind === 'double') return new Float64Array(n);
  if (kind === 'bool') return new Uint8Array(n);
  return new Array<string | null>(n);
}

function copyInto(out: Buffer, chunk: Buffer, at: number, n: number): void {
  if (Array.isArray(out)) {
    for (let i = 0; i < n; i++) out[at + i] = (chunk as (string | null)[])[i];
  } else {
    (out as Int32Array).set((chunk as Int32Array).subarray(0, n), at);
  }
}

/** Fills out[0 .. n-1] from the vector; `before` rows came in earlier chunks (for messages). */
function fill(kind: ColumnKind, name: string, out: Buffer, vector: DuckDBVector, before: number, n: number): void {
  if (kind === 'text') {
    const texts = out as (string | null)[];
    for (let i = 0; i < n; i++) texts[i] = vector.getItem(i) as string | null;
    return;
  }
  if (kind === 'bool') {
    const flags = out as Uint8Array;
    for (let i = 0; i < n; i++) flags[i] = vector.getItem(i) === true ? 1 : 0;
    return;
  }
  const nums = out as Int32Array | Float64Array;
  for (let i = 0; i < n; i++) {
    const v = vector.getItem(i) as number | null;
    if (v === null) {
      if (kind === 'int') throw new Error(`readColumns: column ${name} has a null at row ${before + i + 1}`);
      nums[i] = Number.NaN;
    } else {
      nums[i] = v;
    }
  }
}

/** Where `ChunkAppender.appendColumns` takes a column's values from. */
export type ColumnSource = Int32Array | Float64Array | { constant: number | string } | { codes: Int32Array; texts: readonly string[] };

function fillVector(vector: DuckDBVector, source: ColumnSource, start: number, n: number): void {
  if (source instanceof Float64Array) {
    for (let i = 0; i < n; i++) {
      const v = source[start + i];
      vector.setItem(i, Number.isNaN(v) ? null : (v as never));
    }
  } else if (source instanceof Int32Array) {
    for (let i = 0; i < n; i++) vector.setItem(i, source[start + i] as never);
  } else if ('constant' in source) {
    for (let i = 0; i < n; i++) vector.setItem(i, source.constant as never);
  } else {
    for (let i = 0; i < n; i++) vector.setItem(i, source.texts[source.codes[start + i]] as never);
  }
}

/**
 * Appends rows to a table through data chunks: values are set column-wise into a
 * 2,048-row chunk that is handed to the appender when full. `null` (or NaN for a
 * double) is written as NULL. Call `close()` to flush the last partial chunk.
 */
export class ChunkAppender {
  private readonly chunk: DuckDBDataChunk;
  private readonly vectors: DuckDBVector[];
  private readonly capacity: number;
  private row = 0;
  private written = 0;

  private constructor(
    private readonly appender: Awaited<ReturnType<Database['conn']['createAppender']>>,
    types: readonly DuckDBType[],
  ) {
    this.capacity = 2048;
    this.chunk = DuckDBDataChunk.create(types, this.capacity);
    this.vectors = types.map((_, c) => this.chunk.getColumnVector(c));
  }

  static async open(db: Database, table: string, types: readonly DuckDBType[]): Promise<ChunkAppender> {
    const appender = await db.conn.createAppender(table);
    if (appender.columnCount !== types.length) {
      appender.closeSync();
      throw new Error(`ChunkAppender: ${table} has ${appender.columnCount} columns, ${types.length} types given`);
    }
    return new ChunkAppender(appender, types);
  }

  /** Sets column `c` of the current row. */
  set(c: number, value: number | string | null): void {
    this.vectors[c].setItem(this.row, typeof value === 'number' && Number.isNaN(value) ? null : (value as never));
  }

  endRow(): void {
    this.row++;
    if (this.row === this.capacity) this.flushChunk();
  }

  /**
   * Appends `rows` rows given column by column, one source per column: a typed array
   * (its first `rows` values; a NaN double is NULL), a constant for every row, or codes
   * into a list of texts. Each column is filled in its own loop, so every call inside it
   * meets one kind of vector: several times faster than `set` row by row.
   */
  appendColumns(rows: number, sources: readonly ColumnSource[]): void {
    if (sources.length !== this.vectors.length) throw new Error(`ChunkAppender: ${sources.length} sources for ${this.vectors.length} columns`);
    if (this.row > 0) this.flushChunk();
    for (let start = 0; start < rows; start += this.capacity) {
      const n = Math.min(this.capacity, rows - start);
      sources.forEach((source, c) => fillVector(this.vectors[c], source, start, n));
      this.row = n;
      this.flushChunk();
    }
  }

  /** Rows handed over so far, the current chunk included. */
  get rows(): number {
    return this.written + this.row;
  }

  close(): number {
    if (this.row > 0) this.flushChunk();
    this.appender.flushSync();
    this.appender.closeSync();
    return this.written;
  }

  private flushChunk(): void {
    for (const v of this.vectors) v.flush();
    this.chunk.rowCount = this.row;
    this.appender.appendDataChunk(this.chunk);
    this.written += this.row;
    this.row = 0;
  }
}
