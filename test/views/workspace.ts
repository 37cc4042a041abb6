import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { expect } from 'vitest';
import { resolveConfig } from '../../src/config/load.ts';
import type { ConfigInput } from '../../src/config/schema.ts';
import { memoryLogger } from '../../src/log/logger.ts';
import type { Database } from '../../src/storage/database.ts';
import { refreshDerived } from '../../src/storage/derived.ts';
import { openWorkspace } from '../../src/storage/workspace.ts';

/** A real workspace (migrations, settings, views) in a fresh temp folder. */
export interface TestWorkspace {
  db: Database;
  dir: string;
  close(): void;
}

export async function openTestWorkspace(config: Partial<ConfigInput> = {}): Promise<TestWorkspace> {
  const dir = mkdtempSync(path.join(tmpdir(), 'riskfold-views-'));
  const resolved = resolveConfig(config, path.join(dir, 'pipeline.config.json'));
  const db = await openWorkspace(resolved, memoryLogger().log);
  return {
    db,
    dir,
    close() {
      db.close();
      rmSync(dir, { recursive: true, force: true });
    },
  };
}

type Cell = string | number | null;

/** Inserts raw rows as one delivered file: `line` numbers them 1, 2, ... in the order given. */
async function insertFile(db: Database, table: string, columns: string[], fileId: number, rows: Cell[][]): Promise<void> {
  if (rows.length === 0) return;
  const width = columns.length + 2;
  const placeholders = rows
    .map((_, r) => `(${Array.from({ length: width }, (_, c) => `$${r * width + c + 1}`).join(', ')})`)
    .join(', ');
  const params = rows.flatMap((row, r) => [fileId, r + 1, ...columns.map((_, c) => row[c] ?? null)]);
  await db.run(`insert into ${table} (file_id, line, ${columns.join(', ')}) values ${placeholders}`, params);
  // as the worker does after each ingest: the views read the derived tables
  await refreshDerived(db);
}

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
