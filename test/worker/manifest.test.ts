import { createHash } from 'node:crypto';
import { existsSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { gzipSync } from 'node:zlib';
import { afterEach, describe, expect, it } from 'vitest';
import { ingestFile } from '../../src/ingest/ingestFile.ts';
import { openDatabase } from '../../src/storage/database.ts';
import { pricesCsv } from '../helpers/files.ts';
import { waitFor } from '../helpers/wait.ts';
import { inProcessWorker } from '../helpers/workerFixture.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';

// the digests are computed by node:crypto (OpenSSL's SHA-256, FIPS 180-4), not by riskfold
const sha256 = (bytes: string | Buffer) => createHash('sha256').update(bytes).digest('hex');
const manifestOf = (rows: number, bytes: string | Buffer) => JSON.stringify({ rows, sha256: sha256(bytes) });

describe('the worker with ingest.manifest "required"', () => {
  const workers = inProcessWorker();

  it('holds a file until its manifest arrives, loads it when rows and sha256 match, and quarantines one cut short naming expected and actual', async () => {
    const { wd, lines } = await workers.start({ ingest: { manifest: 'required' } });
    const whole = pricesCsv(10, 2, '2020-01-01'); // 20 data rows
    const a = path.join(wd.config.inbox, 'prices_a.csv');
    writeFileSync(a, whole);
    const held = await waitFor(() => lines().find((l) => l.msg === 'file held in the inbox' && l.file === 'prices_a.csv'), 10_000, 'the hold');
    expect(held).toMatchObject({ code: 'no_manifest', reason: 'waiting for its manifest prices_a.csv.manifest' });
    writeFileSync(`${a}.manifest`, manifestOf(20, whole));
    const loaded = await waitFor(() => lines().find((l) => l.msg === 'file ingested' && l.file === 'prices_a.csv'), 10_000, 'the load');

    // the same sender's next file stops after 10 of its rows, on a line break: only the manifest tells
    const b = path.join(wd.config.inbox, 'prices_b.csv');
    const full = pricesCsv(10, 2, '2020-02-01');
    const cut = `${full.split('\n').slice(0, 11).join('\n')}\n`;
    writeFileSync(`${b}.manifest`, manifestOf(20, full));
    writeFileSync(b, cut);
    await waitFor(() => lines().find((l) => l.msg === 'file rejected' && l.file === 'prices_b.csv'), 10_000, 'the rejection');
    await workers.stop();

    expect(readdirSync(wd.config.inbox)).toEqual([]);
    expect(readdirSync(path.dirname(String(loaded.movedTo))).sort()).toEqual(['prices_a.csv', 'prices_a.csv.manifest']);
    expect(readdirSync(wd.config.quarantine).sort()).toEqual(['prices_b.csv', 'prices_b.csv.manifest', 'prices_b.csv.reason.txt']);
    const reason = readFileSync(path.join(wd.config.quarantine, 'prices_b.csv.reason.txt'), 'utf8');
    expect(reason).toContain(`code:     manifest_mismatch`);
    expect(reason).toContain(`value:    "10 data rows, sha256 ${sha256(cut)}"`);
    expect(reason).toContain(`expected: 20 data rows, sha256 ${sha256(full)} (prices_b.csv.manifest)`);
    const db = await openDatabase(wd.config.database, { readOnly: true });
    try {
      expect(await db.all('select name, status, rows::integer as rows, error from ingested_files order by file_id')).toEqual([
        { name: 'prices_a.csv', status: 'ingested', rows: 20, error: null },
        {
          name: 'prices_b.csv',
          status: 'rejected',
          rows: 0,
          error: `prices_b.csv: data rows and sha256 differ from its manifest: expected 20 rows and sha256 ${sha256(full)}, got 10 rows and sha256 ${sha256(cut)}; deliver the whole file and its manifest again`,
        },
      ]);
      expect(await db.all("select count(*)::integer as n from prices where date >= '2020-02-01'")).toEqual([{ n: 0 }]);
    } finally {
      db.close();
    }
  });
});

describe('ingestFile with ingest.manifest "required"', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  it('holds a file whose manifest is not readable yet, then checks a .gz against the sha256 of its compressed bytes', async () => {
    ws = await tempWorkspace({ ingest: { manifest: 'required' } });
    const bytes = gzipSync(Buffer.from(pricesCsv(3, 2)));
    const file = path.join(ws.config.inbox, 'prices_c.csv.gz');
    writeFileSync(file, bytes);
    writeFileSync(`${file}.manifest`, '{"rows": 6, "sha2');
    expect(await ingestFile(ws.db, ws.config, ws.log, file)).toMatchObject({
      status: 'held',
      hold: { code: 'bad_manifest', reason: 'its manifest prices_c.csv.gz.manifest is not JSON (still being written?)' },
    });
    writeFileSync(`${file}.manifest`, JSON.stringify({ rows: 6, sha256: 'abc' }));
    expect((await ingestFile(ws.db, ws.config, ws.log, file)).hold?.reason).toBe(
      'its manifest prices_c.csv.gz.manifest sha256: must be 64 hexadecimal digits; expected {"rows": <data rows>, "sha256": "<64 hex digits>"}',
    );
    // the sha256 of the decompressed text is not the one of the delivery
    writeFileSync(`${file}.manifest`, manifestOf(6, pricesCsv(3, 2)));
    expect(await ingestFile(ws.db, ws.config, ws.log, file)).toMatchObject({ status: 'rejected', rejection: { code: 'manifest_mismatch' } });
    expect(existsSync(file)).toBe(false);

    const again = path.join(ws.config.inbox, 'prices_d.csv.gz');
    writeFileSync(again, bytes);
    writeFileSync(`${again}.manifest`, JSON.stringify({ rows: 6, sha256: sha256(bytes).toUpperCase(), sender: 'extra keys are ignored' }));
    expect(await ingestFile(ws.db, ws.config, ws.log, again)).toMatchObject({ status: 'ingested', rows: 6 });
  });
});
