import { mkdirSync, mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { openDatabase, type Database } from '../../src/storage/database.ts';
import { applyMigrations, applyViews, listSqlFiles } from '../../src/storage/sqlFiles.ts';
import { memoryLogger } from '../../src/log/logger.ts';

function folder(files: Record<string, string>): string {
  const dir = mkdtempSync(path.join(tmpdir(), 'rf-sql-'));
  mkdirSync(dir, { recursive: true });
  for (const [name, text] of Object.entries(files)) writeFileSync(path.join(dir, name), text);
  return dir;
}

describe('the ordered SQL runner', () => {
  let db: Database | undefined;
  afterEach(() => db?.close());

  it('sorts view files by number and refuses a name of another shape', () => {
    const ok = folder({ '020_b_second.sql': '', '010_a_first.sql': '' });
    expect(listSqlFiles(ok, 'view').map((f) => f.name)).toEqual(['a_first', 'b_second']);
    expect(() => listSqlFiles(folder({ 'weights.sql': '' }), 'view')).toThrow(/weights\.sql: not a view file name/);
    expect(() => listSqlFiles(folder({ '010_a_x.sql': '', '010_a_y.sql': '' }), 'view')).toThrow(/share a number/);
  });

  it('applies each migration once and records its version', async () => {
    const dir = folder({ '0001_first.sql': 'create table t (x integer);', '0002_second.sql': 'insert into t values (1);' });
    db = await openDatabase(':memory:');
    const { log } = memoryLogger();
    expect(await applyMigrations(db, log, dir)).toBe(2);
    expect(await applyMigrations(db, log, dir)).toBe(0);
    expect(await db.all('select count(*)::integer as n from t')).toEqual([{ n: 1 }]);
    expect(await db.all('select version, name from schema_version order by version')).toEqual([
      { version: 1, name: 'first' },
      { version: 2, name: 'second' },
    ]);
  });

  it('rolls back a failing migration and names the file', async () => {
    const dir = folder({ '0001_good.sql': 'create table t (x integer);', '0002_bad.sql': 'insert into t values (1); select * from nowhere;' });
    db = await openDatabase(':memory:');
    await expect(applyMigrations(db, memoryLogger().log, dir)).rejects.toThrow('migration 0002_bad.sql failed');
    expect(await db.all('select count(*)::integer as n from t')).toEqual([{ n: 0 }]);
    expect(await db.all('select version from schema_version')).toEqual([{ version: 1 }]);
  });

  it('names the view that failed and requires the view to be named after its file', async () => {
    db = await openDatabase(':memory:');
    const { log } = memoryLogger();
    await expect(applyViews(db, log, folder({ '010_a_first.sql': 'create or replace view a_first as select * from nowhere' }))).rejects.toThrow(
      'view 010_a_first.sql failed',
    );
    await expect(applyViews(db, log, folder({ '010_a_first.sql': 'create or replace view other as select 1' }))).rejects.toThrow(
      /must create or replace view a_first/,
    );
  });
});
