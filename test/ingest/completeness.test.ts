import { appendFileSync, existsSync, readdirSync, rmSync, utimesSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { brotliCompressSync, gzipSync } from 'node:zlib';
import { afterEach, describe, expect, it } from 'vitest';
import { ingestFile } from '../../src/ingest/ingestFile.ts';
import { listInbox } from '../../src/watch/inboxFiles.ts';
import { writeCsv } from '../helpers/files.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';

let ws: TempWorkspace | undefined;
afterEach(() => {
  ws?.cleanup();
  ws = undefined;
});

const PRICES = 'date,security_id,price\n2026-04-10,EQ-NORDWIND,102\n2026-04-10,EQ-SALTMARSH,55.25\n';
const POSITION_HEADER = ['date', 'portfolio_id', 'security_id', 'quantity'];

/** A positions snapshot of `n` holdings of one portfolio on `date`. */
function snapshot(date: string, n: number): string[][] {
  return [POSITION_HEADER, ...Array.from({ length: n }, (_, i) => [date, 'acct-growth', `EQ-${i}`, '100'])];
}

async function counts(w: TempWorkspace) {
  const [row] = await w.db.all<{ files: number; prices: number; positions: number }>(
    'select (select count(*) from ingested_files)::integer as files, (select count(*) from prices)::integer as prices, (select count(*) from positions)::integer as positions',
  );
  return row;
}

async function holds(w: TempWorkspace) {
  return w.db.all<{ name: string; code: string; released: boolean }>('select name, code, released_at is not null as released from held_files order by held_at, name');
}

describe('ingestFile: complete files only', () => {
  it('holds a file whose last line has no line break, then loads it once the rest arrives', async () => {
    ws = await tempWorkspace();
    const file = path.join(ws.config.inbox, 'prices_0410.csv');
    // a sender paused in the middle of a number: "55.25" would have loaded as 55
    writeFileSync(file, PRICES.slice(0, -4));
    const first = await ingestFile(ws.db, ws.config, ws.log, file);
    expect(first).toMatchObject({ status: 'held', fileId: null, movedTo: file, hold: { code: 'unterminated_line' } });
    expect(existsSync(file)).toBe(true);
    expect(await counts(ws)).toEqual({ files: 0, prices: 0, positions: 0 });
    // held again with the same bytes: no second warning
    await ingestFile(ws.db, ws.config, ws.log, file);
    expect(ws.logLines().filter((l) => l.msg === 'file held in the inbox')).toHaveLength(1);
    expect(await holds(ws)).toEqual([{ name: 'prices_0410.csv', code: 'unterminated_line', released: false }]);

    appendFileSync(file, '.25\n');
    const done = await ingestFile(ws.db, ws.config, ws.log, file);
    expect(done).toMatchObject({ status: 'ingested', rows: 2 });
    expect(await ws.db.all('select price from prices order by price')).toEqual([{ price: 55.25 }, { price: 102 }]);
    expect(await holds(ws)).toEqual([{ name: 'prices_0410.csv', code: 'unterminated_line', released: true }]);
  });

  it('holds a .gz whose stream is cut short or whose last line is open, and loads a whole one', async () => {
    ws = await tempWorkspace();
    const whole = gzipSync(Buffer.from(PRICES));
    const cut = path.join(ws.config.inbox, 'prices_cut.csv.gz');
    writeFileSync(cut, whole.subarray(0, whole.length - 6));
    expect(await ingestFile(ws.db, ws.config, ws.log, cut)).toMatchObject({ status: 'held', hold: { code: 'truncated_stream' } });
    const open = path.join(ws.config.inbox, 'prices_open.csv.gz');
    writeFileSync(open, gzipSync(Buffer.from(PRICES.slice(0, -1))));
    expect(await ingestFile(ws.db, ws.config, ws.log, open)).toMatchObject({ status: 'held', hold: { code: 'unterminated_line' } });
    writeFileSync(cut, whole);
    expect(await ingestFile(ws.db, ws.config, ws.log, cut)).toMatchObject({ status: 'ingested', rows: 2 });
  });

  it('refuses a .gz that expands past ingest.maxExpandedMB while reading it', async () => {
    ws = await tempWorkspace({ ingest: { maxExpandedMB: 1 } });
    // 2 MB of one repeated row compress to a few kilobytes: the shape of a gzip bomb
    const row = '2026-04-10,EQ-NORDWIND,102\n';
    const bomb = path.join(ws.config.inbox, 'prices_bomb.csv.gz');
    writeFileSync(bomb, gzipSync(Buffer.from(`date,security_id,price\n${row.repeat(Math.ceil((2 * 1024 * 1024) / row.length))}`)));
    const out = await ingestFile(ws.db, ws.config, ws.log, bomb);
    expect(out).toMatchObject({ status: 'rejected', rejection: { code: 'too_large', file: 'prices_bomb.csv.gz' } });
    expect(out.rejection?.message).toBe('expands past 1 MB when decompressed; refused while reading');
    expect(readdirSync(ws.config.quarantine).sort()).toEqual(['prices_bomb.csv.gz', 'prices_bomb.csv.gz.reason.txt']);
    expect((await counts(ws)).prices).toBe(0);
  });

  it('refuses compressed forms it cannot check while reading (zstd, brotli), naming the file and why, and loads none of their rows', async () => {
    ws = await tempWorkspace();
    // a real zstd frame holding one raw block (RFC 8878, sections 3.1.1 and 3.1.1.2), its last line left open
    const text = Buffer.from(PRICES.slice(0, -4));
    const blockHeader = (text.length << 3) | 1; // last block, raw, its size
    const zst = Buffer.concat([
      Buffer.from([0x28, 0xb5, 0x2f, 0xfd, 0x20, text.length]),
      Buffer.from([blockHeader & 0xff, (blockHeader >> 8) & 0xff, blockHeader >> 16]),
      text,
    ]);
    const files = { 'prices_0410.csv.zst': zst, 'prices_0411.csv.br': brotliCompressSync(Buffer.from(PRICES)) };
    for (const [name, bytes] of Object.entries(files)) writeFileSync(path.join(ws.config.inbox, name), bytes);
    const zstOut = await ingestFile(ws.db, ws.config, ws.log, path.join(ws.config.inbox, 'prices_0410.csv.zst'));
    expect(zstOut).toMatchObject({ status: 'rejected', rejection: { code: 'unsupported_compression', value: '.zst' } });
    expect(zstOut.rejection?.message).toBe('compressed as zstd, which riskfold cannot check while reading (a cut last line, ingest.maxExpandedMB); not loaded');
    const brOut = await ingestFile(ws.db, ws.config, ws.log, path.join(ws.config.inbox, 'prices_0411.csv.br'));
    expect(brOut.rejection?.message).toMatch(/^compressed as brotli, /);
    expect(readdirSync(ws.config.quarantine).sort()).toEqual(['prices_0410.csv.zst', 'prices_0410.csv.zst.reason.txt', 'prices_0411.csv.br', 'prices_0411.csv.br.reason.txt']);
    expect(await counts(ws)).toEqual({ files: 2, prices: 0, positions: 0 });
  });

  it('with ingest.doneMarker waits for <name>.done, then loads and removes the marker', async () => {
    ws = await tempWorkspace({ ingest: { doneMarker: 'done' } });
    const file = writeCsv(ws.config.inbox, 'prices_0410.csv', [['date', 'security_id', 'price'], ['2026-04-10', 'EQ-NORDWIND', '102']]);
    expect(await ingestFile(ws.db, ws.config, ws.log, file)).toMatchObject({ status: 'held', hold: { code: 'no_done_marker', reason: 'waiting for its marker prices_0410.csv.done' } });
    writeFileSync(`${file}.done`, '');
    // the marker matches prices*.csv* but is not a delivery of its own
    expect(listInbox(ws.config.inbox, ['.done'])).toEqual([file]);
    expect(await ingestFile(ws.db, ws.config, ws.log, file)).toMatchObject({ status: 'ingested', rows: 1 });
    expect(readdirSync(ws.config.inbox)).toEqual([]);
  });
});

describe('ingestFile: a positions snapshot that drops most holdings', () => {
  it('holds the snapshot keeping under half of the holdings, alerts once, and loads one that keeps more', async () => {
    ws = await tempWorkspace();
    const first = await ingestFile(ws.db, ws.config, ws.log, writeCsv(ws.config.inbox, 'positions_0410.csv', snapshot('2026-04-10', 10)));
    expect(first.status).toBe('ingested');
    const cut = writeCsv(ws.config.inbox, 'positions_0413.csv', snapshot('2026-04-13', 4));
    const held = await ingestFile(ws.db, ws.config, ws.log, cut);
    expect(held).toMatchObject({ status: 'held', hold: { code: 'snapshot_drop' } });
    expect(held.hold?.reason).toContain('portfolio acct-growth on 2026-04-13 has 4 holdings against 10 in its snapshot of 2026-04-10');
    expect(await counts(ws)).toMatchObject({ files: 1, positions: 10 });
    await ingestFile(ws.db, ws.config, ws.log, cut);
    const alerts = await ws.db.all<{ kind: string; text: string }>("select kind, payload->>'text' as text from alerts");
    expect(alerts).toEqual([{ kind: 'file_held', text: expect.stringContaining('positions_0413.csv held: portfolio acct-growth') }]);

    rmSync(cut);
    const kept = await ingestFile(ws.db, ws.config, ws.log, writeCsv(ws.config.inbox, 'positions_0414.csv', snapshot('2026-04-14', 5)));
    expect(kept.status).toBe('ingested');
  });

  it('loads a held snapshot named in ingest.confirmedFiles', async () => {
    ws = await tempWorkspace({ ingest: { confirmedFiles: ['positions_0413.csv'] } });
    await ingestFile(ws.db, ws.config, ws.log, writeCsv(ws.config.inbox, 'positions_0410.csv', snapshot('2026-04-10', 10)));
    const out = await ingestFile(ws.db, ws.config, ws.log, writeCsv(ws.config.inbox, 'positions_0413.csv', snapshot('2026-04-13', 1)));
    expect(out).toMatchObject({ status: 'ingested', rows: 1 });
  });

  it('loads a held snapshot delivered again (same bytes, a new write), and holds a correction of the same date that is cut short', async () => {
    ws = await tempWorkspace();
    await ingestFile(ws.db, ws.config, ws.log, writeCsv(ws.config.inbox, 'positions_0410.csv', snapshot('2026-04-10', 10)));
    const same = writeCsv(ws.config.inbox, 'positions_0410b.csv', snapshot('2026-04-10', 3));
    expect((await ingestFile(ws.db, ws.config, ws.log, same)).status).toBe('held');
    // the restart's catch-up sees the same file unchanged: still held
    expect((await ingestFile(ws.db, ws.config, ws.log, same)).status).toBe('held');
    utimesSync(same, new Date(), new Date(Date.now() + 5_000));
    expect(await ingestFile(ws.db, ws.config, ws.log, same)).toMatchObject({ status: 'ingested', rows: 3 });
    expect(await holds(ws)).toEqual([{ name: 'positions_0410b.csv', code: 'snapshot_drop', released: true }]);
  });

  it('finds each portfolio\'s previous snapshot however long ago it was, beside one from the day before', async () => {
    ws = await tempWorkspace();
    const rows = (date: string, portfolio: string, n: number) => Array.from({ length: n }, (_, i) => [date, portfolio, `EQ-${i}`, '100']);
    await ingestFile(ws.db, ws.config, ws.log, writeCsv(ws.config.inbox, 'positions_old.csv', [POSITION_HEADER, ...rows('2024-03-01', 'acct-income', 10)]));
    await ingestFile(ws.db, ws.config, ws.log, writeCsv(ws.config.inbox, 'positions_0409.csv', [POSITION_HEADER, ...rows('2026-04-09', 'acct-growth', 10)]));
    const out = await ingestFile(
      ws.db,
      ws.config,
      ws.log,
      writeCsv(ws.config.inbox, 'positions_0410.csv', [POSITION_HEADER, ...rows('2026-04-10', 'acct-growth', 10), ...rows('2026-04-10', 'acct-income', 2)]),
    );
    expect(out).toMatchObject({ status: 'held', hold: { code: 'snapshot_drop' } });
    expect(out.hold?.reason).toContain('portfolio acct-income on 2026-04-10 has 2 holdings against 10 in its snapshot of 2024-03-01');
  });
});
