import { existsSync, readFileSync, readdirSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { gzipSync } from 'node:zlib';
import { afterEach, describe, expect, it } from 'vitest';
import { formatRejection, type Rejection } from '../../src/errors.ts';
import { ingestFile, type IngestOutcome } from '../../src/ingest/ingestFile.ts';
import { writeCsv } from '../helpers/files.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';

let ws: TempWorkspace | undefined;
afterEach(() => {
  ws?.cleanup();
  ws = undefined;
});

const RAW_TABLES = ['prices', 'positions', 'fx_rates', 'securities', 'benchmarks'];

async function rawCounts(): Promise<Record<string, number>> {
  const out: Record<string, number> = {};
  for (const t of RAW_TABLES) out[t] = (await current().db.all<{ n: number }>(`select count(*)::integer n from ${t}`))[0].n;
  return out;
}

/** A workspace that already holds one valid prices file, so "unchanged" is not "still empty". */
async function workspace(overrides: Parameters<typeof tempWorkspace>[0] = {}): Promise<TempWorkspace> {
  ws = await tempWorkspace(overrides);
  const seed = writeCsv(ws.config.inbox, 'prices_seed.csv', [['date', 'security_id', 'price'], ['2026-04-01', 'EQ-SEED', '5']]);
  expect((await ingestFile(ws.db, ws.config, ws.log, seed)).status).toBe('ingested');
  return ws;
}

/** Writes `rows` into the inbox under `name` and ingests it, expecting a rejection. */
async function rejectRows(name: string, rows: string[][]): Promise<Rejection> {
  const w = ws ?? (await workspace());
  return expectRejected(writeCsv(w.config.inbox, name, rows));
}

/**
 * What every rejection must do: raw tables unchanged, the file in quarantine with its
 * reason file, a `rejected` row with the one-line error, a file_rejected alert, a warn log record.
 */
async function expectRejected(file: string): Promise<Rejection> {
  const ws = current();
  const before = await rawCounts();
  const out: IngestOutcome = await ingestFile(ws.db, ws.config, ws.log, file);
  expect(out.status).toBe('rejected');
  const rejection = out.rejection!;
  expect(await rawCounts()).toEqual(before);
  expect(existsSync(file)).toBe(false);
  expect(path.dirname(out.movedTo)).toBe(ws.config.quarantine);
  const reason = readFileSync(`${out.movedTo}.reason.txt`, 'utf8');
  expect(reason).toContain(formatRejection(rejection));
  expect(reason).toMatch(/^received: \d{4}-\d\d-\d\dT/m);
  const [rec] = await ws.db.all<{ status: string; error: string; archived_path: string }>(
    'select status, error, archived_path from ingested_files where file_id = $1',
    [out.fileId],
  );
  expect(rec).toEqual({ status: 'rejected', error: formatRejection(rejection), archived_path: out.movedTo });
  // and one alert to operations, with the same line: the data it holds is left out of risk
  const alerts = await ws.db.all<{ kind: string; text: string; level: string }>(
    "select kind, payload->>'text' as text, payload->>'level' as level from alerts where alert_id = $1",
    [`file-rejected-${out.fileId}`],
  );
  expect(alerts).toEqual([
    { kind: 'file_rejected', level: 'rejected', text: `${path.basename(file)} rejected, nothing of it loaded, moved to quarantine: ${formatRejection(rejection)}` },
  ]);
  const logged = ws.logLines().find((l) => l.msg === 'file rejected' && l.fileId === out.fileId);
  expect(logged).toMatchObject({ level: 40, stage: 'ingest', file: path.basename(file), code: rejection.code, message: rejection.message });
  expect(logged?.row).toBe(rejection.row);
  return rejection;
}

function current(): TempWorkspace {
  if (!ws) throw new Error('no workspace open');
  return ws;
}

const PRICE_HEADER = ['date', 'security_id', 'price', 'currency'];

describe('ingestFile: rejected files', () => {
  it('names the price that is not positive (the message shape of the style guide)', async () => {
    const rows = [PRICE_HEADER, ...Array.from({ length: 16 }, (_, i) => [`2026-04-${String(i + 1).padStart(2, '0')}`, 'EQ-NORDWIND', '10', 'EUR'])];
    rows.push(['2026-04-17', 'EQ-NORDWIND', '-3.0', 'EUR'], ['2026-04-18', 'EQ-NORDWIND', 'x', 'EUR']);
    const r = await rejectRows('prices_0412.csv', rows);
    expect(r).toMatchObject({ code: 'bad_value', file: 'prices_0412.csv', row: 17, column: 'price', value: '-3.0', expected: 'a positive number' });
    expect(formatRejection(r)).toBe('prices_0412.csv line 18, column price: "-3.0" is not a positive number');
  });

  it('rejects a zero price, a non-finite price and an empty one', async () => {
    expect(await rejectRows('prices_a.csv', [PRICE_HEADER, ['2026-04-10', 'EQ-NORDWIND', '0', 'EUR']])).toMatchObject({ row: 1, column: 'price', value: '0' });
    expect(await rejectRows('prices_b.csv', [PRICE_HEADER, ['2026-04-10', 'EQ-NORDWIND', 'inf', 'EUR']])).toMatchObject({ row: 1, column: 'price', value: 'inf' });
    const empty = await rejectRows('prices_c.csv', [PRICE_HEADER, ['2026-04-10', 'EQ-NORDWIND', '', 'EUR']]);
    expect(formatRejection(empty)).toBe('prices_c.csv line 2, column price: is empty; expected a positive number');
  });

  it('rejects a date that does not parse in the source format', async () => {
    const r = await rejectRows('prices_d.csv', [PRICE_HEADER, ['2026-04-10', 'EQ-NORDWIND', '1', ''], ['2026-04-31', 'EQ-NORDWIND', '1', '']]);
    expect(formatRejection(r)).toBe('prices_d.csv line 3, column date: "2026-04-31" is not a date in the format %Y-%m-%d');
  });

  // ISO 8601 calendar date, extended format YYYY-MM-DD: nothing shorter, longer or signed
  it.each(['26-04-10', '2026/04/10', '2026-04-10 17:30', 'infinity', '-2026-04-10', '2026-4-10'])('rejects %s as an ISO date', async (text) => {
    const r = await rejectRows('prices_iso.csv', [PRICE_HEADER, ['2026-04-09', 'EQ-NORDWIND', '1', ''], [text, 'EQ-NORDWIND', '1', '']]);
    expect(r).toMatchObject({ code: 'bad_value', row: 2, column: 'date', value: text });
  });

  it('rejects a currency that is not an ISO 4217 code', async () => {
    const r = await rejectRows('prices_e.csv', [PRICE_HEADER, ['2026-04-10', 'EQ-NORDWIND', '1', 'eur']]);
    expect(r).toMatchObject({ row: 1, column: 'currency', value: 'eur', expected: 'an ISO 4217 currency code (three capital letters)' });
  });

  it('rejects an fx rate that is not positive, and an fx row without currency', async () => {
    const header = ['date', 'currency', 'rate'];
    expect(await rejectRows('fx_a.csv', [header, ['2026-04-10', 'EUR', '1.08'], ['2026-04-10', 'CHF', '-1.1']])).toMatchObject({ code: 'bad_value', row: 2, column: 'rate', value: '-1.1' });
    expect(await rejectRows('fx_b.csv', [header, ['2026-04-10', '', '1.08']])).toMatchObject({ row: 1, column: 'currency', value: '' });
  });

  it('accepts negative and zero quantities but not text', async () => {
    const ws = await workspace();
    const header = ['date', 'portfolio_id', 'security_id', 'quantity'];
    const ok = await ingestFile(ws.db, ws.config, ws.log, writeCsv(ws.config.inbox, 'positions_ok.csv', [header, ['2026-04-10', 'acct-growth', 'EQ-NORDWIND', '-40'], ['2026-04-10', 'acct-growth', 'BD-KESTREL-28', '0']]));
    expect(ok.status).toBe('ingested');
    const r = await rejectRows('positions_bad.csv', [header, ['2026-04-10', 'acct-growth', 'EQ-NORDWIND', '12 shares']]);
    expect(formatRejection(r)).toBe('positions_bad.csv line 2, column quantity: "12 shares" is not a number');
  });

  it('checks a benchmarks file like every other: a weight that is no fraction, a repeated constituent, a missing benchmark_id', async () => {
    const header = ['date', 'benchmark_id', 'security_id', 'weight'];
    const weight = await rejectRows('benchmarks_a.csv', [header, ['2026-04-10', 'bm-core', 'EQ-A', '0.6'], ['2026-04-10', 'bm-core', 'EQ-B', '40%']]);
    expect(formatRejection(weight)).toBe('benchmarks_a.csv line 3, column weight: "40%" is not a fraction from -1 to 1 (0.4 = 40%)');
    // a weight written in percent is refused, not read as 4,000%
    const percent = await rejectRows('benchmarks_p.csv', [header, ['2026-04-10', 'bm-core', 'EQ-A', '60'], ['2026-04-10', 'bm-core', 'EQ-B', '40']]);
    expect(formatRejection(percent)).toBe('benchmarks_p.csv line 2, column weight: "60" is not a fraction from -1 to 1 (0.4 = 40%), zero or of magnitude 1e-12 or more');
    const twice = await rejectRows('benchmarks_b.csv', [header, ['2026-04-10', 'bm-core', 'EQ-A', '0.6'], ['2026-04-10', 'bm-core', 'EQ-A', '0.4']]);
    expect(twice).toMatchObject({ code: 'duplicate_key', row: 2, column: 'date+benchmark_id+security_id' });
    const missing = await rejectRows('benchmarks_c.csv', [['date', 'index', 'security_id', 'weight'], ['2026-04-10', 'bm-core', 'EQ-A', '1']]);
    expect(missing).toMatchObject({ code: 'missing_column', column: 'benchmark_id' });
  });

  it('rejects a benchmarks file whose weights of one benchmark and date do not add up to 1 within the tolerance, naming the sum', async () => {
    const header = ['date', 'benchmark_id', 'security_id', 'weight'];
    // bm-core on 2026-04-10 adds up (0.6 + 0.4); bm-core on 2026-04-13 lacks a constituent: 0.55 + 0.42 = 0.97
    const short = await rejectRows('benchmarks_sum.csv', [
      header,
      ['2026-04-10', 'bm-core', 'EQ-A', '0.6'],
      ['2026-04-10', 'bm-core', 'EQ-B', '0.4'],
      ['2026-04-13', 'bm-core', 'EQ-A', '0.55'],
      ['2026-04-13', 'bm-core', 'EQ-B', '0.42'],
    ]);
    expect(short).toMatchObject({ code: 'weight_sum', row: 3, column: 'weight', value: '0.97' });
    expect(formatRejection(short)).toBe(
      'benchmarks_sum.csv line 4, column weight: the 2 weights of benchmark "bm-core" on 2026-04-13 add up to 0.97, not 1 (within 0.01)',
    );
    // 0.995 is within 0.01 of 1; a negative weight counts by its sign: 1 + 0.2 - 0.2 adds up
    const ok = writeCsv(current().config.inbox, 'benchmarks_ok.csv', [header, ['2026-04-10', 'bm-core', 'EQ-A', '0.995'], ['2026-04-10', 'bm-wide', 'EQ-A', '1'], ['2026-04-10', 'bm-wide', 'EQ-B', '0.2'], ['2026-04-10', 'bm-wide', 'EQ-C', '-0.2']]);
    expect((await ingestFile(current().db, current().config, current().log, ok)).status).toBe('ingested');
  });

  it('takes the benchmark weight tolerance from ingest.benchmarkWeightTolerance', async () => {
    await workspace({ ingest: { benchmarkWeightTolerance: 0.05 } });
    const header = ['date', 'benchmark_id', 'security_id', 'weight'];
    const within = writeCsv(current().config.inbox, 'benchmarks_w.csv', [header, ['2026-04-13', 'bm-core', 'EQ-A', '0.55'], ['2026-04-13', 'bm-core', 'EQ-B', '0.42']]);
    expect((await ingestFile(current().db, current().config, current().log, within)).status).toBe('ingested');
    const beyond = await rejectRows('benchmarks_x.csv', [header, ['2026-04-14', 'bm-core', 'EQ-A', '0.5'], ['2026-04-14', 'bm-core', 'EQ-B', '0.4']]);
    expect(beyond.message).toBe('the 2 weights of benchmark "bm-core" on 2026-04-14 add up to 0.9, not 1 (within 0.05)');
  });

  it('rejects an empty portfolio id and a cash id without a valid currency code', async () => {
    const header = ['date', 'portfolio_id', 'security_id', 'quantity'];
    expect(await rejectRows('positions_a.csv', [header, ['2026-04-10', '  ', 'EQ-NORDWIND', '1']])).toMatchObject({ row: 1, column: 'portfolio_id', expected: 'a non-empty id' });
    const cash = await rejectRows('positions_b.csv', [header, ['2026-04-10', 'acct-growth', 'CASH:EURO', '1000']]);
    expect(cash).toMatchObject({ row: 1, column: 'security_id', value: 'CASH:EURO', expected: 'CASH: followed by an ISO 4217 currency code' });
  });

  it('rejects an id with surrounding spaces rather than load it as another security', async () => {
    const header = ['date', 'portfolio_id', 'security_id', 'quantity'];
    const r = await rejectRows('positions_d.csv', [header, ['2026-04-10', 'acct-growth', ' EQ-NORDWIND', '1']]);
    expect(formatRejection(r)).toBe('positions_d.csv line 2, column security_id: " EQ-NORDWIND" is not an id without surrounding spaces');
  });

  it('keeps the message on one line when the bad cell holds a quoted line break', async () => {
    const r = await rejectRows('prices_nl.csv', [PRICE_HEADER, ['2026-04-10', 'EQ-NORDWIND', '"1\n2"', '']]);
    expect(r).toMatchObject({ row: 1, column: 'price', value: '1\n2' });
    expect(formatRejection(r)).toBe('prices_nl.csv line 2, column price: "1\\n2" is not a positive number');
  });

  it('reports the earliest failing row across columns', async () => {
    const r = await rejectRows('prices_f.csv', [PRICE_HEADER, ['2026-04-10', 'EQ-A', '1', ''], ['2026-04-10', 'EQ-B', '1', 'usd'], ['bad', 'EQ-C', '-1', '']]);
    expect(r).toMatchObject({ row: 2, column: 'currency' });
  });

  it('names both rows of a repeated key', async () => {
    const r = await rejectRows('prices_g.csv', [PRICE_HEADER, ['2026-04-10', 'EQ-A', '1', ''], ['2026-04-10', 'EQ-B', '2', ''], ['2026-04-10', 'EQ-A', '1.5', '']]);
    expect(r).toMatchObject({ code: 'duplicate_key', row: 3, column: 'date+security_id' });
    expect(formatRejection(r)).toBe('prices_g.csv line 4, column date+security_id: "2026-04-10", "EQ-A" repeats the date+security_id of line 2');
  });

  it('compares keys by value: the same date written two ways is the same key', async () => {
    await workspace({ sources: [{ name: 'seed', kind: 'prices', pattern: 'prices*' }, { name: 'fx', kind: 'fx', pattern: 'fx*.csv', dateFormat: '%d/%m/%Y' }] });
    const r = await rejectRows('fx_c.csv', [['date', 'currency', 'rate'], ['1/4/2026', 'EUR', '1.08'], ['01/04/2026', 'EUR', '1.09']]);
    expect(r).toMatchObject({ code: 'duplicate_key', row: 2, value: '"01/04/2026", "EUR"' });
  });

  it('names a missing column and lists the header it found', async () => {
    const r = await rejectRows('positions_c.csv', [['date', 'portfolio', 'security_id', 'quantity'], ['2026-04-10', 'acct-growth', 'EQ-A', '1']]);
    expect(r).toMatchObject({ code: 'missing_column', column: 'portfolio_id' });
    expect(formatRejection(r)).toBe(
      'positions_c.csv, column portfolio_id: is missing; header found: "date", "portfolio", "security_id", "quantity"; ' +
        'if the sender names this column differently, map it in source "positions": "columns": { "portfolio_id": "portfolio" }; if it is absent, the file must be fixed',
    );
  });

  it('says a file that starts with a data row has no header line, most likely the second part of a file written in two', async () => {
    const ws = await workspace();
    // the sender paused right after a line break: the first part is a whole file of its own and loads
    const first = writeCsv(ws.config.inbox, 'prices_1201.csv', [PRICE_HEADER, ['2026-04-10', 'EQ-C', '50.1', 'EUR']]);
    expect((await ingestFile(ws.db, ws.config, ws.log, first)).status).toBe('ingested');
    const r = await rejectRows('prices_1201.csv', [['2026-04-11', 'EQ-C', '50.3', 'EUR'], ['2026-04-12', 'EQ-C', '50.4', 'EUR']]);
    expect(r).toMatchObject({ code: 'no_header', row: 0, value: '2026-04-11,EQ-C,50.3,EUR', fixIn: 'file' });
    expect(formatRejection(r)).toBe(
      'prices_1201.csv line 1: has no header line: its first line "2026-04-11", "EQ-C", "50.3", "EUR" reads as a data row (it starts with a date), ' +
        'perhaps the rest of a file written in two parts; deliver the whole file again; to never load a partly written file, ' +
        'set "ingest.doneMarker" in the config (the sender then writes prices_1201.csv.done when finished) or "ingest.manifest": "required" (prices_1201.csv.manifest)',
    );
  });

  it('holds a zero-byte file (a write not begun) and rejects a file with a header only', async () => {
    const ws = await workspace();
    const empty = path.join(ws.config.inbox, 'prices_empty.csv');
    writeFileSync(empty, '');
    expect(await ingestFile(ws.db, ws.config, ws.log, empty)).toMatchObject({ status: 'held', fileId: null, hold: { code: 'empty_so_far' } });
    expect(existsSync(empty)).toBe(true);
    expect(await rejectRows('prices_header.csv', [PRICE_HEADER])).toMatchObject({ code: 'empty_file', message: 'has a header but no data rows' });
  });

  it('rejects a row with the wrong number of fields as unreadable, with DuckDB\'s line', async () => {
    const r = await rejectRows('prices_h.csv', [PRICE_HEADER, ['2026-04-10', 'EQ-A', '1', 'EUR'], ['2026-04-10', 'EQ-B', '2']]);
    expect(r).toMatchObject({ code: 'unreadable', row: 2, value: '2026-04-10,EQ-B,2' });
    expect(r.message).toContain('Expected Number of Columns: 4 Found: 3');
  });

  it('rejects a .gz file that is not gzip as unreadable', async () => {
    const ws = await workspace();
    const file = path.join(ws.config.inbox, 'prices_i.csv.gz');
    writeFileSync(file, 'date,security_id,price\n2026-04-10,EQ-A,1\n');
    expect(await expectRejected(file)).toMatchObject({ code: 'unreadable' });
  });

  // the UTF-16 byte-order marks FF FE (little-endian) and FE FF (big-endian): the Unicode Standard, section 3.10
  const UTF16_TEXT = 'date,security_id,price\n2026-04-10,EQ-A,99.3\n';
  const utf16le = (text: string) => Buffer.concat([Buffer.from([0xff, 0xfe]), Buffer.from(text, 'utf16le')]);
  const utf16be = (text: string) => Buffer.concat([Buffer.from([0xfe, 0xff]), Buffer.from(text, 'utf16le').swap16()]);

  it.each([
    ['little-endian', 'FF FE', utf16le],
    ['big-endian', 'FE FF', utf16be],
  ])('rejects a UTF-16 %s file with its byte-order mark, keeping its bytes, and says to save it as UTF-8', async (form, mark, encode) => {
    const ws = await workspace();
    const file = path.join(ws.config.inbox, 'prices_utf16.csv');
    writeFileSync(file, encode(UTF16_TEXT));
    const r = await expectRejected(file);
    expect(r).toMatchObject({ code: 'unsupported_encoding', value: `UTF-16 ${form}`, fixIn: 'file' });
    expect(formatRejection(r)).toBe(
      `prices_utf16.csv: is UTF-16 ${form} text (it starts with the byte-order mark ${mark}), not UTF-8; not loaded; ` +
        'save it as UTF-8 (in Excel as "CSV UTF-8"; in PowerShell with -Encoding utf8)',
    );
    expect(readFileSync(path.join(ws.config.quarantine, 'prices_utf16.csv'))).toEqual(encode(UTF16_TEXT));
  });

  it('rejects UTF-16 without a byte-order mark and UTF-16 inside a .gz, and still holds a file of NUL bytes (space reserved, text not yet written)', async () => {
    const ws = await workspace();
    const bare = path.join(ws.config.inbox, 'prices_bare.csv');
    writeFileSync(bare, Buffer.from(UTF16_TEXT, 'utf16le'));
    expect(formatRejection(await expectRejected(bare))).toMatch(/^prices_bare\.csv: is UTF-16 little-endian text \(every other byte of its start is NUL\), not UTF-8; /);
    const gz = path.join(ws.config.inbox, 'prices_utf16.csv.gz');
    writeFileSync(gz, gzipSync(utf16be(UTF16_TEXT)));
    expect(await expectRejected(gz)).toMatchObject({ code: 'unsupported_encoding', value: 'UTF-16 big-endian' });
    const reserved = path.join(ws.config.inbox, 'prices_reserved.csv');
    writeFileSync(reserved, Buffer.alloc(4096));
    expect(await ingestFile(ws.db, ws.config, ws.log, reserved)).toMatchObject({ status: 'held', hold: { code: 'unterminated_line' } });
  });

  it('rejects a name that matches no source as unknown_kind', async () => {
    const r = await rejectRows('holdings_0410.csv', [PRICE_HEADER, ['2026-04-10', 'EQ-A', '1', '']]);
    expect(r).toMatchObject({ code: 'unknown_kind', value: 'holdings_0410.csv' });
    expect(r.message).toContain('prices*.csv*');
  });

  it('throws a config fault (not a rejection) for a source mapping a column its kind does not have, and leaves the file', async () => {
    ws = await tempWorkspace({ sources: [{ name: 'typo', kind: 'prices', pattern: 'prices*', columns: { prise: 'Close' } }] });
    const file = writeCsv(ws.config.inbox, 'prices_k.csv', [['date', 'security_id', 'Close'], ['2026-04-10', 'EQ-A', '1']]);
    await expect(ingestFile(ws.db, ws.config, ws.log, file)).rejects.toMatchObject({ kind: 'config_invalid', message: expect.stringContaining('"prise"') });
    expect(existsSync(file)).toBe(true);
    expect(await ws.db.all('select count(*)::integer n from ingested_files')).toEqual([{ n: 0 }]);
  });

  it('never overwrites in quarantine: a second bad file of the same name gets a suffix', async () => {
    await rejectRows('prices_j.csv', [PRICE_HEADER, ['2026-04-10', 'EQ-A', '-1', '']]);
    await rejectRows('prices_j.csv', [PRICE_HEADER, ['2026-04-10', 'EQ-A', '-2', '']]);
    const ws = current();
    expect(readdirSync(ws.config.quarantine).sort()).toEqual(['prices_j-1.csv', 'prices_j-1.csv.reason.txt', 'prices_j.csv', 'prices_j.csv.reason.txt']);
    expect(readFileSync(path.join(ws.config.quarantine, 'prices_j-1.csv.reason.txt'), 'utf8')).toContain('value:    "-2"');
  });
});

/** 'YYYY-MM-DD' of the local day `days` after today (the worker counts from the receiving day, local time). */
function localDayFromToday(days: number): string {
  const now = new Date();
  const d = new Date(now.getFullYear(), now.getMonth(), now.getDate() + days);
  return [d.getFullYear(), d.getMonth() + 1, d.getDate()].map((n) => String(n).padStart(2, '0')).join('-');
}

describe('ingestFile: plausibility at the door', () => {
  const POSITION_HEADER = ['date', 'portfolio_id', 'security_id', 'quantity'];

  it('refuses dates before 1900-01-01 and after today plus 7 days, naming the accepted range', async () => {
    const ahead = localDayFromToday(7);
    const tooFar = localDayFromToday(8);
    const early = await rejectRows('prices_early.csv', [PRICE_HEADER, ['2026-04-10', 'EQ-A', '1', ''], ['1899-12-31', 'EQ-A', '1', '']]);
    expect(early).toMatchObject({ row: 2, column: 'date', value: '1899-12-31', expected: `a date from 1900-01-01 to ${ahead}` });
    expect(formatRejection(early)).toBe(`prices_early.csv line 3, column date: "1899-12-31" is not a date from 1900-01-01 to ${ahead}`);
    expect(await rejectRows('prices_zero.csv', [PRICE_HEADER, ['0000-01-01', 'EQ-A', '1', '']])).toMatchObject({ row: 1, column: 'date', value: '0000-01-01' });
    expect(await rejectRows('prices_end.csv', [PRICE_HEADER, ['9999-12-31', 'EQ-A', '1', '']])).toMatchObject({ row: 1, column: 'date', value: '9999-12-31' });
    expect(await rejectRows('prices_ahead.csv', [PRICE_HEADER, [tooFar, 'EQ-A', '1', '']])).toMatchObject({ row: 1, column: 'date', value: tooFar });
    const w = current();
    const edge = await ingestFile(w.db, w.config, w.log, writeCsv(w.config.inbox, 'prices_edge.csv', [PRICE_HEADER, ['1900-01-01', 'EQ-A', '1', ''], [ahead, 'EQ-A', '1', '']]));
    expect(edge.status).toBe('ingested');
  });

  // IEEE 754 binary64: 5e-324 is the smallest subnormal, about 1.8e308 the largest finite value
  it('refuses a subnormal price and overflow-prone prices and quantities', async () => {
    const tiny = await rejectRows('prices_tiny.csv', [PRICE_HEADER, ['2026-04-10', 'EQ-A', '5e-324', '']]);
    expect(formatRejection(tiny)).toBe('prices_tiny.csv line 2, column price: "5e-324" is not a positive number of magnitude 1e-12 to 1000000000000000');
    expect(await rejectRows('prices_huge.csv', [PRICE_HEADER, ['2026-04-10', 'EQ-A', '1e308', '']])).toMatchObject({ row: 1, column: 'price', value: '1e308' });
    const qty = await rejectRows('positions_huge.csv', [POSITION_HEADER, ['2026-04-10', 'acct-growth', 'EQ-A', '1'], ['2026-04-10', 'acct-growth', 'EQ-B', '-1e307']]);
    expect(qty).toMatchObject({ row: 2, column: 'quantity', value: '-1e307', expected: 'a number of zero or of magnitude 1e-12 to 1000000000000000' });
    expect(await rejectRows('fx_tiny.csv', [['date', 'currency', 'rate'], ['2026-04-10', 'EUR', '1e-300']])).toMatchObject({ row: 1, column: 'rate' });
  });

  it('reads the magnitude bounds from the config', async () => {
    ws = await tempWorkspace({ ingest: { maxMagnitude: 1e6, minMagnitude: 0.001 } });
    const r = await rejectRows('prices_cfg.csv', [PRICE_HEADER, ['2026-04-10', 'EQ-A', '999999', ''], ['2026-04-10', 'EQ-B', '1000001', '']]);
    expect(r).toMatchObject({ row: 2, column: 'price', value: '1000001', expected: 'a positive number of magnitude 0.001 to 1000000' });
    const w = current();
    const zero = await ingestFile(w.db, w.config, w.log, writeCsv(w.config.inbox, 'positions_z.csv', [POSITION_HEADER, ['2026-04-10', 'acct-growth', 'EQ-A', '0']]));
    expect(zero.status).toBe('ingested');
  });

  // DuckDB's cast alone reads "1_75.5" as 175.5 and "+-1" as -1 (checked against DuckDB 1.5)
  it('accepts only numbers written in plain decimal notation', async () => {
    const r = await rejectRows('prices_us.csv', [PRICE_HEADER, ['2026-04-10', 'EQ-A', '1_75.5', '']]);
    expect(formatRejection(r)).toBe('prices_us.csv line 2, column price: "1_75.5" is not a positive number');
    for (const [i, bad] of ['0x1A', '.5e', '1.2.3', '+-1', '1__2', 'NaN', 'inf'].entries()) {
      const got = await rejectRows(`positions_n${i}.csv`, [POSITION_HEADER, ['2026-04-10', 'acct-growth', 'EQ-A', bad]]);
      expect(got).toMatchObject({ row: 1, column: 'quantity', value: bad });
    }
    const w = current();
    const ok = await ingestFile(
      w.db,
      w.config,
      w.log,
      writeCsv(w.config.inbox, 'positions_ok.csv', [POSITION_HEADER, ...['-40', '+3', '.5', '2.5E3', '1e-3'].map((q, i) => ['2026-04-10', 'acct-growth', `EQ-${i}`, q])]),
    );
    expect(ok.status).toBe('ingested');
    const stored = await w.db.all<{ q: number }>('select quantity as q from positions where file_id = $1 order by line', [ok.fileId]);
    expect(stored.map((s) => s.q)).toEqual([-40, 3, 0.5, 2500, 0.001]);
  });

  // Unicode Standard Annex #9 (bidirectional algorithm) lists U+202E and U+200F as explicit
  // direction marks; ECMA-48 makes ESC (U+001B) the start of terminal control sequences
  it('refuses ids holding control, format or bidirectional characters, and prints them escaped', async () => {
    const bidi = await rejectRows('positions_rlo.csv', [POSITION_HEADER, ['2026-04-10', 'acct\u202Egrowth', 'EQ-A', '1']]);
    expect(bidi).toMatchObject({ row: 1, column: 'portfolio_id', value: 'acct\u202Egrowth', expected: 'an id of printable characters (no control, format or bidirectional marks)' });
    expect(formatRejection(bidi)).toBe('positions_rlo.csv line 2, column portfolio_id: "acct\\u202egrowth" is not an id of printable characters (no control, format or bidirectional marks)');
    const esc = await rejectRows('prices_esc.csv', [PRICE_HEADER, ['2026-04-10', 'EQ-\u001b[31mA', '1', '']]);
    expect(formatRejection(esc)).toContain('"EQ-\\u001b[31mA"');
    for (const [i, id] of ['EQ-\u200FA', 'EQ-\u200BA', 'EQ-\u0007A'].entries()) {
      expect(await rejectRows(`prices_id${i}.csv`, [PRICE_HEADER, ['2026-04-10', id, '1', '']])).toMatchObject({ column: 'security_id', value: id });
    }
  });
});
