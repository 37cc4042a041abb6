import { copyFileSync, existsSync, linkSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { ingestFile } from '../../src/ingest/ingestFile.ts';
import { archiveDir } from '../../src/ingest/moves.ts';
import { writeCsv } from '../helpers/files.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';

let ws: TempWorkspace;
afterEach(() => ws?.cleanup());

const PRICES = [
  ['date', 'security_id', 'price', 'currency'],
  ['2026-04-09', 'EQ-NORDWIND', '101.25', 'EUR'],
  ['2026-04-09', 'BD-KESTREL-28', '98.5', ''],
  ['2026-04-10', 'EQ-NORDWIND', '102', 'EUR'],
];

const todayArchive = () => archiveDir(ws.config.archive, new Date());

describe('ingestFile: loading', () => {
  it('loads a prices file with file_id and 1-based lines, records it and moves it to the dated archive', async () => {
    ws = await tempWorkspace();
    const file = writeCsv(ws.config.inbox, 'prices_0410.csv', PRICES);
    const out = await ingestFile(ws.db, ws.config, ws.log, file);

    expect(out).toMatchObject({ status: 'ingested', kind: 'prices', rows: 3, minDate: '2026-04-09', portfolios: null });
    expect(out.movedTo).toBe(path.join(todayArchive(), 'prices_0410.csv'));
    expect(existsSync(file)).toBe(false);
    expect(existsSync(out.movedTo)).toBe(true);
    const rows = await ws.db.all('select file_id, line, date, security_id, price, currency from prices order by line');
    expect(rows).toEqual([
      { file_id: out.fileId, line: '1', date: '2026-04-09', security_id: 'EQ-NORDWIND', price: 101.25, currency: 'EUR' },
      { file_id: out.fileId, line: '2', date: '2026-04-09', security_id: 'BD-KESTREL-28', price: 98.5, currency: null },
      { file_id: out.fileId, line: '3', date: '2026-04-10', security_id: 'EQ-NORDWIND', price: 102, currency: 'EUR' },
    ]);
    const [rec] = await ws.db.all('select name, kind, source, rows, status, error, min_date, max_date, archived_path from ingested_files');
    expect(rec).toEqual({
      name: 'prices_0410.csv', kind: 'prices', source: 'prices', rows: '3', status: 'ingested', error: null,
      min_date: '2026-04-09', max_date: '2026-04-10', archived_path: out.movedTo,
    });
    const logged = ws.logLines().find((l) => l.msg === 'file ingested');
    expect(logged).toMatchObject({ stage: 'ingest', file: 'prices_0410.csv', rows: 3, kind: 'prices' });
  });

  it('agrees with DuckDB\'s own auto-detecting read_csv on count, sums and date range (reference: DuckDB aggregates)', async () => {
    ws = await tempWorkspace();
    const lines = [['date', 'portfolio_id', 'security_id', 'quantity']];
    for (let d = 1; d <= 20; d++) {
      for (const [p, s, q] of [['acct-growth', 'EQ-NORDWIND', 10 * d], ['acct-growth', 'CASH:EUR', -5.5 * d], ['acct-income', 'BD-KESTREL-28', 0]] as const) {
        lines.push([`2026-03-${String(d).padStart(2, '0')}`, p, s, String(q)]);
      }
    }
    const file = writeCsv(ws.config.inbox, 'positions_03.csv', lines);
    const copy = path.join(ws.dir, 'reference.csv');
    copyFileSync(file, copy);
    const out = await ingestFile(ws.db, ws.config, ws.log, file);
    expect(out.portfolios).toEqual(['acct-growth', 'acct-income']);
    const [ours] = await ws.db.all('select count(*) n, sum(quantity) q, min(date) lo, max(date) hi from positions');
    const [ref] = await ws.db.all(`select count(*) n, sum(quantity) q, min(date) lo, max(date) hi from read_csv('${copy}')`);
    expect(ours).toEqual(ref);
  });

  it('numbers lines by data row even when DuckDB reads the file in parallel chunks', async () => {
    ws = await tempWorkspace();
    const n = 1_200_000; // ~45 MB: more than one 32 MB CSV buffer, read by both threads
    const file = path.join(ws.config.inbox, 'positions_big.csv');
    await ws.db.run(
      `copy (select '2026-04-10' as date, 'acct-growth' as portfolio_id, 'EQ-SEC' || i as security_id, i as quantity
             from range(1, ${n + 1}) t(i)) to '${file}' (header, delimiter ',')`,
    );
    const out = await ingestFile(ws.db, ws.config, ws.log, file);
    expect(out.rows).toBe(n);
    expect(await ws.db.all('select count(*)::integer n from positions where line <> quantity')).toEqual([{ n: 0 }]);
  });

  it('reads the UTF-8 byte-order mark and CRLF line ends', async () => {
    ws = await tempWorkspace();
    const file = writeCsv(ws.config.inbox, 'fx_0410.csv', [['date', 'currency', 'rate'], ['2026-04-10', 'EUR', '1.0825'], ['2026-04-10', 'CHF', '1.131']], {
      bom: true,
      eol: '\r\n',
    });
    const out = await ingestFile(ws.db, ws.config, ws.log, file);
    expect(out.status).toBe('ingested');
    expect(await ws.db.all('select currency, rate from fx_rates order by line')).toEqual([
      { currency: 'EUR', rate: 1.0825 },
      { currency: 'CHF', rate: 1.131 },
    ]);
  });

  it('reads .csv.gz files', async () => {
    ws = await tempWorkspace();
    const file = writeCsv(ws.config.inbox, 'securities_2026.csv.gz', [['security_id', 'name', 'asset_class', 'currency'], ['EQ-NORDWIND', 'Nordwind Turbines', 'equity', 'EUR'], ['BD-KESTREL-28', 'Kestrel 2028 note', 'bond', '']], { gzip: true });
    const out = await ingestFile(ws.db, ws.config, ws.log, file);
    expect(out).toMatchObject({ status: 'ingested', rows: 2, minDate: null });
    expect(await ws.db.all('select security_id, name, asset_class, currency from securities order by line')).toEqual([
      { security_id: 'EQ-NORDWIND', name: 'Nordwind Turbines', asset_class: 'equity', currency: 'EUR' },
      { security_id: 'BD-KESTREL-28', name: 'Kestrel 2028 note', asset_class: 'bond', currency: null },
    ]);
  });

  it('maps a custodian layout: semicolons, decimal comma with thousands dots, own column names and date format', async () => {
    ws = await tempWorkspace({
      sources: [
        {
          name: 'alpenbank',
          kind: 'prices',
          pattern: 'kurse_*.csv',
          delimiter: ';',
          decimal: ',',
          dateFormat: '%d.%m.%Y',
          columns: { date: 'Datum', security_id: 'Wertpapier', price: 'Schlusskurs', currency: 'Waehrung' },
        },
      ],
    });
    const file = writeCsv(ws.config.inbox, 'kurse_0410.csv', [
      [' DATUM ', 'Wertpapier', 'Schlusskurs', 'Waehrung', 'Boerse'],
      ['09.04.2026', 'EQ-ALPENGLOW', '1.234,56', 'CHF', 'X'],
      ['10.04.2026', 'EQ-ALPENGLOW', '1.240,5', 'CHF', 'X'],
      ['10.04.2026', 'EQ-EDELWEISS', '87,125', 'CHF', 'X'],
    ], { delimiter: ';' });
    const out = await ingestFile(ws.db, ws.config, ws.log, file);
    expect(out).toMatchObject({ status: 'ingested', rows: 3, minDate: '2026-04-09' });
    // decimal comma convention "1.234,56" = 1234.56 (common practice, no source)
    expect(await ws.db.all('select date, security_id, price from prices order by line')).toEqual([
      { date: '2026-04-09', security_id: 'EQ-ALPENGLOW', price: 1234.56 },
      { date: '2026-04-10', security_id: 'EQ-ALPENGLOW', price: 1240.5 },
      { date: '2026-04-10', security_id: 'EQ-EDELWEISS', price: 87.125 },
    ]);
  });

  it('keeps both rows of a correction, each with its own file_id', async () => {
    ws = await tempWorkspace();
    const first = await ingestFile(ws.db, ws.config, ws.log, writeCsv(ws.config.inbox, 'prices_0410.csv', PRICES));
    const fix = writeCsv(ws.config.inbox, 'prices_0410_fix.csv', [['date', 'security_id', 'price'], ['2026-04-10', 'EQ-NORDWIND', '102.4']]);
    const second = await ingestFile(ws.db, ws.config, ws.log, fix);
    expect(second).toMatchObject({ status: 'ingested', rows: 1, minDate: '2026-04-10' });
    expect(second.fileId).toBeGreaterThan(first.fileId!);
    const rows = await ws.db.all("select file_id, price from prices where security_id = 'EQ-NORDWIND' and date = '2026-04-10' order by file_id");
    expect(rows).toEqual([{ file_id: first.fileId, price: 102 }, { file_id: second.fileId, price: 102.4 }]);
  });
});

describe('ingestFile: the same bytes again', () => {
  it('records a duplicate under another name, adds no rows and archives the file', async () => {
    ws = await tempWorkspace();
    const first = await ingestFile(ws.db, ws.config, ws.log, writeCsv(ws.config.inbox, 'prices_0410.csv', PRICES));
    const again = writeCsv(ws.config.inbox, 'prices_0410_resent.csv', PRICES);
    const out = await ingestFile(ws.db, ws.config, ws.log, again);
    expect(out).toMatchObject({ status: 'duplicate', rows: 0, minDate: null, duplicateOf: first.fileId });
    expect(out.movedTo).toBe(path.join(todayArchive(), 'prices_0410_resent.csv'));
    expect(existsSync(again)).toBe(false);
    expect(await ws.db.all('select count(*)::integer n from prices')).toEqual([{ n: 3 }]);
    expect(await ws.db.all("select status, rows, duplicate_of from ingested_files where name = 'prices_0410_resent.csv'")).toEqual([
      { status: 'duplicate', rows: '0', duplicate_of: first.fileId },
    ]);
  });

  it('records a re-sent file with the same name as a duplicate too, archived under a suffix', async () => {
    ws = await tempWorkspace();
    await ingestFile(ws.db, ws.config, ws.log, writeCsv(ws.config.inbox, 'prices_0410.csv', PRICES));
    const out = await ingestFile(ws.db, ws.config, ws.log, writeCsv(ws.config.inbox, 'prices_0410.csv', PRICES));
    expect(out.status).toBe('duplicate');
    expect(out.movedTo).toBe(path.join(todayArchive(), 'prices_0410-1.csv'));
  });

  it('after a stop between commit and move, finishes the move and records no duplicate', async () => {
    ws = await tempWorkspace();
    const file = writeCsv(ws.config.inbox, 'positions_0410.csv', [['date', 'portfolio_id', 'security_id', 'quantity'], ['2026-04-10', 'acct-growth', 'EQ-NORDWIND', '120']]);
    const keep = path.join(ws.dir, 'kept.csv');
    copyFileSync(file, keep);
    const first = await ingestFile(ws.db, ws.config, ws.log, file);
    // simulate the crash: the row is committed but the file never left the inbox
    copyFileSync(keep, file);
    rmSync(first.movedTo);
    const out = await ingestFile(ws.db, ws.config, ws.log, file);
    expect(out).toMatchObject({ status: 'ingested', fileId: first.fileId, rows: 1, minDate: '2026-04-10', portfolios: ['acct-growth'], movedTo: first.movedTo });
    expect(existsSync(file)).toBe(false);
    expect(existsSync(first.movedTo)).toBe(true);
    expect(await ws.db.all('select count(*)::integer n from ingested_files')).toEqual([{ n: 1 }]);
    expect(await ws.db.all('select count(*)::integer n from positions')).toEqual([{ n: 1 }]);
  });

  it('after a stop between the archive link and the inbox unlink, only removes the inbox name', async () => {
    ws = await tempWorkspace();
    const file = writeCsv(ws.config.inbox, 'prices_0410.csv', PRICES);
    const first = await ingestFile(ws.db, ws.config, ws.log, file);
    linkSync(first.movedTo, file); // the same inode under both names, as the move leaves it midway
    const out = await ingestFile(ws.db, ws.config, ws.log, file);
    expect(out).toMatchObject({ status: 'ingested', fileId: first.fileId, movedTo: first.movedTo });
    expect(existsSync(file)).toBe(false);
    expect(readdirSync(todayArchive())).toEqual(['prices_0410.csv']);
    expect(await ws.db.all('select count(*)::integer n from ingested_files')).toEqual([{ n: 1 }]);
  });
});

describe('ingestFile: archive names', () => {
  it('never overwrites a file already in the archive: the new one gets a numeric suffix before the extensions', async () => {
    ws = await tempWorkspace();
    const dir = todayArchive();
    writeCsv(dir, 'prices_0410.csv.gz', [['not', 'ours']]);
    writeFileSync(path.join(dir, 'prices_0410-1.csv.gz'), 'also taken');
    const out = await ingestFile(ws.db, ws.config, ws.log, writeCsv(ws.config.inbox, 'prices_0410.csv.gz', PRICES, { gzip: true }));
    expect(out.movedTo).toBe(path.join(dir, 'prices_0410-2.csv.gz'));
    expect(await ws.db.all('select archived_path from ingested_files')).toEqual([{ archived_path: out.movedTo }]);
    expect(readdirSync(dir).sort()).toEqual(['prices_0410-1.csv.gz', 'prices_0410-2.csv.gz', 'prices_0410.csv.gz']);
  });
});
