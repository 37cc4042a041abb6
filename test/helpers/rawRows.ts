import { expect } from 'vitest';
import type { Database } from '../../src/storage/database.ts';
import { refreshDerived } from '../../src/storage/derived.ts';

export type Cell = string | number | null;

/** Rows per insert statement: keeps the parameter list of one statement small. */
const CHUNK = 500;

/** Inserts raw rows that carry their own delivery, `[file_id, line, ...columns]`. */
export async function insertRows(db: Database, table: string, columns: string[], rows: Cell[][]): Promise<void> {
  const width = columns.length + 2;
  for (let start = 0; start < rows.length; start += CHUNK) {
    const chunk = rows.slice(start, start + CHUNK);
    const placeholders = chunk.map((_, r) => `(${Array.from({ length: width }, (_, c) => `$${r * width + c + 1}`).join(', ')})`).join(', ');
    const params = chunk.flatMap((row) => Array.from({ length: width }, (_, c) => row[c] ?? null));
    await db.run(`insert into ${table} (file_id, line, ${columns.join(', ')}) values ${placeholders}`, params);
  }
}

/** Inserts raw rows, then brings the derived tables up to date as the worker does after each ingest (the views read them). */
export async function insertRaw(db: Database, table: string, columns: string[], rows: Cell[][]): Promise<void> {
  await insertRows(db, table, columns, rows);
  await refreshDerived(db);
}

/** Inserts raw rows as one delivered file: `line` numbers them 1, 2, ... in the order given. */
const insertFile = (db: Database, table: string, columns: string[], fileId: number, rows: Cell[][]) =>
  insertRaw(db, table, columns, rows.map((row, r) => [fileId, r + 1, ...row]));

/** rows: [date, security_id, price, currency?] */
export const insertPrices = (db: Database, fileId: number, rows: Cell[][]) =>
  insertFile(db, 'prices', ['date', 'security_id', 'price', 'currency'], fileId, rows);

/** rows: [date, portfolio_id, security_id, quantity] */
export const insertPositions = (db: Database, fileId: number, rows: Cell[][]) =>
  insertFile(db, 'positions', ['date', 'portfolio_id', 'security_id', 'quantity'], fileId, rows);

/** rows: [date, currency, rate] */
export const insertFx = (db: Database, fileId: number, rows: Cell[][]) =>
  insertFile(db, 'fx_rates', ['date', 'currency', 'rate'], fileId, rows);

/** rows: [security_id, name, asset_class, currency] */
export const insertSecurities = (db: Database, fileId: number, rows: Cell[][]) =>
  insertFile(db, 'securities', ['security_id', 'name', 'asset_class', 'currency'], fileId, rows);

/** rows: [date, benchmark_id, security_id, weight] */
export const insertBenchmarks = (db: Database, fileId: number, rows: Cell[][]) =>
  insertFile(db, 'benchmarks', ['date', 'benchmark_id', 'security_id', 'weight'], fileId, rows);

/** Raw rows as delivered, each with its file and line: the input of the reference model and of insertDeliveries. */
export interface PriceRow { fileId: number; line: number; date: string; securityId: string; price: number; currency: string | null }
export interface PositionRow { fileId: number; line: number; date: string; portfolioId: string; securityId: string; quantity: number }
export interface FxRow { fileId: number; line: number; date: string; currency: string; rate: number }
export interface SecurityRow { fileId: number; line: number; securityId: string; currency: string | null }

export interface Deliveries {
  prices: PriceRow[];
  positions: PositionRow[];
  fx: FxRow[];
  securities: SecurityRow[];
}

/** Inserts every raw row of `raw` (the derived tables are refreshed once at the end, not per table). */
export async function insertDeliveries(db: Database, raw: Deliveries): Promise<void> {
  await insertDeliveryRows(db, raw);
  await refreshDerived(db);
}

/** Inserts every raw row of `raw` and leaves the derived tables as they were (for tests of the refresh itself). */
export async function insertDeliveryRows(db: Database, raw: Deliveries): Promise<void> {
  await insertRows(db, 'securities', ['security_id', 'currency'], raw.securities.map((r) => [r.fileId, r.line, r.securityId, r.currency]));
  await insertRows(db, 'prices', ['date', 'security_id', 'price', 'currency'], raw.prices.map((r) => [r.fileId, r.line, r.date, r.securityId, r.price, r.currency]));
  await insertRows(db, 'fx_rates', ['date', 'currency', 'rate'], raw.fx.map((r) => [r.fileId, r.line, r.date, r.currency, r.rate]));
  await insertRows(db, 'positions', ['date', 'portfolio_id', 'security_id', 'quantity'], raw.positions.map((r) => [r.fileId, r.line, r.date, r.portfolioId, r.securityId, r.quantity]));
}

/** Rows equal to the expected ones, numbers to `digits` decimals (floating point), the rest exactly. */
export function expectRowsClose(actual: Record<string, unknown>[], expected: Record<string, unknown>[], digits = 12): void {
  expect(actual).toHaveLength(expected.length);
  expected.forEach((want, i) => {
    expect(Object.keys(actual[i]).sort()).toEqual(Object.keys(want).sort());
    for (const [key, value] of Object.entries(want)) {
      if (typeof value === 'number') expect(actual[i][key], `row ${i} ${key}`).toBeCloseTo(value, digits);
      else expect(actual[i][key], `row ${i} ${key}`).toEqual(value);
    }
  });
}
