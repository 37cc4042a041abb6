import { mkdirSync, mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { openDatabase, type Database } from '../../src/storage/database.ts';
import { applyMigrations, applyViews, LAYERS, listLadder, listMigrations } from '../../src/storage/sqlFiles.ts';
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

  it('sorts the ladder by number and names each step\'s kind and object', () => {
    const ok = folder({
      '020_clean_view_snapshots.sql': 'create or replace view clean_snapshots as select * from derived_snapshots',
      '010_clean_stored_snapshots.sql': 'insert into derived_snapshots select 1',
    });
    expect(listLadder(ok).map((s) => [s.file, s.layer, s.kind, s.object])).toEqual([
      ['010_clean_stored_snapshots.sql', 'clean', 'stored', 'derived_snapshots'],
      ['020_clean_view_snapshots.sql', 'clean', 'view', 'clean_snapshots'],
    ]);
  });

  it('refuses a ladder whose names do not hold what they promise', () => {
    const view = (name: string) => `create or replace view ${name} as select 1`;
    expect(() => listLadder(folder({ '010_clean_prices.sql': view('clean_prices') }))).toThrow(/010_clean_prices\.sql: not a ladder step file name/);
    expect(() => listLadder(folder({ '010_clean_view_x.sql': view('clean_x'), '010_clean_view_y.sql': view('clean_y') }))).toThrow(/share a number/);
    expect(() => listLadder(folder({ '010_tidy_view_x.sql': view('tidy_x') }))).toThrow(/unknown layer "tidy"/);
    expect(() => listLadder(folder({ '010_value_view_x.sql': view('value_x'), '020_clean_view_y.sql': view('clean_y') }))).toThrow(
      /020_clean_view_y\.sql: layer clean comes before value/,
    );
    expect(() => listLadder(folder({ '010_clean_view_x.sql': view('other') }))).toThrow(/must create or replace view clean_x/);
    expect(() => listLadder(folder({ '010_clean_stored_x.sql': 'insert into derived_y select 1' }))).toThrow(/must insert into derived_x/);
    expect(() =>
      listLadder(
        folder({
          '010_clean_stored_x.sql': '-- backs clean_y\ninsert into derived_x select * from clean_y',
          '020_clean_view_y.sql': view('clean_y'),
        }),
      ),
    ).toThrow(/010_clean_stored_x\.sql: reads clean_y, which a later step defines \(020_clean_view_y\.sql\)/);
  });

  it('holds the project\'s ladder in layer order, both kinds present', () => {
    const steps = listLadder();
    expect(new Set(steps.map((s) => s.layer))).toEqual(new Set(LAYERS));
    expect(steps.filter((s) => s.kind === 'stored').map((s) => s.object)).toEqual([
      'derived_snapshots',
      'derived_held_securities',
      'derived_valuation_dates',
      'derived_held_out_prices',
      'derived_aligned_prices',
      'derived_aligned_fx',
      'derived_position_weights',
      'derived_security_currencies',
      'derived_security_returns',
      'derived_portfolio_returns',
    ]);
  });

  it('refuses a migration name of another shape', () => {
    expect(() => listMigrations(folder({ '001_first.sql': '' }))).toThrow(/001_first\.sql: not a migration file name/);
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

  it('names the view that failed and applies only the view steps', async () => {
    db = await openDatabase(':memory:');
    const { log } = memoryLogger();
    await applyMigrations(db, log); // the shared rules read pipeline_settings
    await expect(applyViews(db, log, folder({ '010_clean_view_first.sql': 'create or replace view clean_first as select * from nowhere' }))).rejects.toThrow(
      'view 010_clean_view_first.sql failed',
    );
    await applyViews(
      db,
      log,
      folder({
        '010_clean_stored_first.sql': 'insert into derived_first select * from nowhere',
        '020_clean_view_first.sql': 'create or replace view clean_first as select 1 as x',
      }),
    );
    expect(await db.all('select x from clean_first')).toEqual([{ x: 1 }]);
  });

  it('defines the cash rule once, as macros every step and query reads', async () => {
    db = await openDatabase(':memory:');
    const { log } = memoryLogger();
    await applyMigrations(db, log);
    await db.run("insert into pipeline_settings (base_currency, max_stale_days, trading_days_per_year, windows) values ('USD', 5, 252, [250]::integer[])");
    await applyViews(db, log, folder({}));
    // cash is CASH:<ISO 4217 code>, price 1 in its own currency (SPEC.md, "Cash")
    const rows = await db.all<{ id: string; cash: boolean; currency: string | null; base: boolean; eur: boolean }>(
      `select id, is_cash(id) as cash, cash_currency(id) as currency, is_base_cash(id) as base, is_cash_in(id, 'EUR') as eur
       from (values ('CASH:USD'), ('CASH:EUR'), ('EQ-CASH:USD'), ('cash:USD')) t(id) order by id`,
    );
    expect(rows).toEqual([
      { id: 'CASH:EUR', cash: true, currency: 'EUR', base: false, eur: true },
      { id: 'CASH:USD', cash: true, currency: 'USD', base: true, eur: false },
      { id: 'EQ-CASH:USD', cash: false, currency: null, base: false, eur: false },
      { id: 'cash:USD', cash: false, currency: null, base: false, eur: false },
    ]);
  });
});
