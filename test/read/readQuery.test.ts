import { existsSync, mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { toCsv } from '../../src/cli/format.ts';
import { RiskfoldError } from '../../src/errors.ts';
import { readTable, runReadOnlyQuery } from '../../src/read/readQuery.ts';
import { openDatabase, type Database } from '../../src/storage/database.ts';
import { lockDownReader } from '../../src/storage/readerSandbox.ts';

describe('runReadOnlyQuery', () => {
  let cleanup: (() => void) | undefined;
  afterEach(() => cleanup?.());

  let dir = '';

  /** A database file with two stored doubles, opened read-only and locked down as `sql` opens it. */
  async function readOnlyCopy(readableDirs: string[] = []): Promise<Database> {
    dir = mkdtempSync(path.join(tmpdir(), 'riskfold-query-'));
    const file = path.join(dir, 'history.duckdb');
    const writer = await openDatabase(file);
    await writer.run('create table prices (line integer, security_id varchar, price double)');
    await writer.run("insert into prices values (1, 'EQ-NORDWIND', 0.1::double + 0.2::double), (2, 'EQ-NORDWIND', 1::double / 3)");
    writer.close();
    const db = await openDatabase(file, { readOnly: true });
    await lockDownReader(db, readableDirs.map((d) => path.join(dir, d)));
    cleanup = () => {
      db.close();
      rmSync(dir, { recursive: true, force: true });
    };
    return db;
  }

  it.each([
    'select * from prices',
    'with p as (select price from prices) select max(price) from p',
    'describe prices',
    'show tables',
    'summarize prices',
    "pragma table_info('prices')",
    'from prices',
    'explain select 1',
  ])('runs the read %s', async (sql) => {
    const db = await readOnlyCopy();
    const result = await runReadOnlyQuery(db, sql);
    expect(result.columns.length).toBeGreaterThan(0);
  });

  it.each([
    "insert into prices values (3, 'EQ-NORDWIND', 2)",
    'update prices set price = 0',
    'delete from prices',
    'create table scratch (x integer)',
    'drop table prices',
    "copy prices to '/tmp/riskfold-should-not-exist.csv'",
    "attach '/tmp/riskfold-should-not-exist.duckdb' as other",
    'set threads = 1',
    'checkpoint',
    'load json',
    "export database '/tmp/riskfold-should-not-exist'",
    "explain analyze copy prices to '/tmp/riskfold-should-not-exist.csv'",
    "pragma enable_profiling",
  ])('refuses %s with a clear message, before DuckDB runs it', async (sql) => {
    const db = await readOnlyCopy();
    const err = await runReadOnlyQuery(db, sql).catch((e: unknown) => e);
    expect(err).toBeInstanceOf(RiskfoldError);
    expect((err as RiskfoldError).kind).toBe('query_refused');
    expect((err as Error).message).toMatch(/^refused: [A-Z_]+ statements may write/);
    const [{ n }] = await db.all<{ n: string }>('select count(*) as n from prices');
    expect(n).toBe('2');
  });

  it('says a mistyped table or a syntax error in one line, with DuckDB\'s hint, without the echo of the query', async () => {
    const db = await readOnlyCopy();
    const failure = (sql: string) => runReadOnlyQuery(db, sql).then(() => null, (err: unknown) => err);
    const typo = await failure('select * from prise');
    expect(typo).toBeInstanceOf(RiskfoldError);
    expect((typo as Error).message).toMatch(/^Catalog Error: Table with name prise does not exist! Did you mean "prices"\?/);
    expect((typo as Error).message).not.toMatch(/\n|LINE 1|\^/);
    const syntax = await failure('select from where');
    expect(syntax).toBeInstanceOf(RiskfoldError);
    expect((syntax as Error).message).toMatch(/^Parser Error: /);
    expect((syntax as Error).message).not.toContain('\n');
  });

  it('leaves no trace of a refused EXPORT DATABASE, even in a folder the query may read', async () => {
    const db = await readOnlyCopy(['open']);
    mkdirSync(path.join(dir, 'open'));
    const target = path.join(dir, 'open', 'dump');
    await expect(runReadOnlyQuery(db, `export database '${target}'`)).rejects.toThrow(/^refused: EXPORT statements may write/);
    expect(existsSync(target)).toBe(false);
  });

  it('reads only the database: local files, URLs and settings are out of reach', async () => {
    const db = await readOnlyCopy();
    writeFileSync(path.join(dir, 'secret.txt'), 'nothing to see');
    await expect(runReadOnlyQuery(db, `select * from read_text('${path.join(dir, 'secret.txt')}')`)).rejects.toThrow(/disabled by configuration/);
    await expect(runReadOnlyQuery(db, `select * from glob('${dir}/*')`)).rejects.toThrow(/disabled by configuration/);
    // no extension is fetched to read a URL: access ends before any download
    await expect(runReadOnlyQuery(db, "select * from 'https://example.invalid/prices.csv'")).rejects.toThrow(/disabled by configuration/);
    await expect(db.run('set enable_external_access = true')).rejects.toThrow(/locked|Cannot enable/);
  });

  it('reads files under a folder the user opted into, and nowhere next to it', async () => {
    const db = await readOnlyCopy(['inbox']);
    mkdirSync(path.join(dir, 'inbox'));
    mkdirSync(path.join(dir, 'inbox2'));
    writeFileSync(path.join(dir, 'inbox', 'a.csv'), 'x\n1\n');
    writeFileSync(path.join(dir, 'inbox2', 'b.csv'), 'x\n2\n');
    expect((await runReadOnlyQuery(db, `select x from read_csv('${path.join(dir, 'inbox', 'a.csv')}')`)).rows).toEqual([[1]]);
    await expect(runReadOnlyQuery(db, `select x from read_csv('${path.join(dir, 'inbox2', 'b.csv')}')`)).rejects.toThrow(/disabled by configuration/);
  });

  it('refuses two statements at once, so a read cannot smuggle a write behind it', async () => {
    const db = await readOnlyCopy();
    await expect(runReadOnlyQuery(db, 'select 1; delete from prices')).rejects.toThrow(/exactly one SQL statement, got 2/);
  });

  // IEEE 754 doubles: 0.1 + 0.2 is 0.30000000000000004 and 1/3 is 0.3333333333333333 in the
  // shortest round-trip form (ECMAScript Number::toString, the same digits DuckDB reads back)
  it('prints stored doubles so they parse back to the same double (IEEE 754 round trip)', async () => {
    const db = await readOnlyCopy();
    const result = await runReadOnlyQuery(db, 'select price from prices order by line');
    expect(result.rows.map((r) => r[0])).toEqual([0.1 + 0.2, 1 / 3]);
    const csvLines = toCsv(result).trim().split('\n');
    expect(csvLines).toEqual(['price', '0.30000000000000004', '0.3333333333333333']);
    expect(csvLines.slice(1).map(Number)).toEqual([0.1 + 0.2, 1 / 3]);
    // and DuckDB's own cast of the printed text gives back the identical stored value
    const [{ same }] = await db.all<{ same: boolean }>(
      `select bool_and(price = case line when 1 then '${csvLines[1]}'::double else '${csvLines[2]}'::double end) as same from prices`,
    );
    expect(same).toBe(true);
  });

  it('turns BIGINT and small DECIMAL values into numbers, keeps what does not fit a double as text', async () => {
    const db = await readOnlyCopy();
    const result = await readTable(
      db,
      "select (select count(*) from prices) as n, 12.50::decimal(6,2) as d, 9007199254740993::bigint as big, 123456789012345678.5::decimal(38,1) as wide, date '2026-03-02' as day",
    );
    expect(result.rows[0]).toEqual([2, 12.5, '9007199254740993', '123456789012345678.5', '2026-03-02']);
  });
});
