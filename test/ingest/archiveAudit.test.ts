import { appendFileSync, readFileSync, rmSync, statSync, utimesSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { auditArchive } from '../../src/ingest/archiveAudit.ts';
import { ingestFile, type IngestOutcome } from '../../src/ingest/ingestFile.ts';
import { readStatus } from '../../src/read/readStatus.ts';
import { writeCsv } from '../helpers/files.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';

let ws: TempWorkspace | undefined;
afterEach(() => {
  ws?.cleanup();
  ws = undefined;
});

const INCREMENTAL = { full: false, acknowledged: [] };
const FULL = { full: true, acknowledged: [] };

async function ingestPrices(w: TempWorkspace, name: string, security: string): Promise<IngestOutcome> {
  return ingestFile(w.db, w.config, w.log, writeCsv(w.config.inbox, name, [['date', 'security_id', 'price'], ['2026-04-10', security, '1']]));
}

/** The archive problems `status --details` shows as open: name and problem. */
async function openFindings(w: TempWorkspace): Promise<string[][]> {
  const sections = await readStatus(w.db, w.config, { portfolio: null, details: true, now: new Date() });
  const { columns, rows } = sections.find((s) => s.key === 'fileProblemRows')!.result;
  const [name, problem] = [columns.indexOf('name'), columns.indexOf('problem')];
  return rows.filter((r) => String(r[problem]).startsWith('archive: ')).map((r) => [String(r[name]), String(r[problem])]);
}

async function resolutions(w: TempWorkspace) {
  return w.db.all<{ file_id: number; finding: string; resolution: string | null }>('select file_id, finding, resolution from archive_findings order by found_at, file_id');
}

describe('auditArchive', () => {
  it('reports an archived file whose bytes changed after it was loaded, and one that vanished, once each; a second audit reads nothing unchanged', async () => {
    ws = await tempWorkspace();
    const a = await ingestPrices(ws, 'prices_a.csv', 'EQ-A');
    const b = await ingestPrices(ws, 'prices_b.csv', 'EQ-B');
    await ingestPrices(ws, 'prices_c.csv', 'EQ-C');
    expect(await auditArchive(ws.db, ws.log, INCREMENTAL)).toEqual({ found: [], resolved: [], hashed: 3, skipped: 0 });
    appendFileSync(a.movedTo, '2026-04-13,EQ-A,2\n');
    rmSync(b.movedTo);
    expect(await auditArchive(ws.db, ws.log, INCREMENTAL)).toEqual({
      found: [
        { fileId: a.fileId, archivedPath: a.movedTo, finding: 'changed' },
        { fileId: b.fileId, archivedPath: b.movedTo, finding: 'missing' },
      ],
      resolved: [],
      hashed: 1,
      skipped: 1,
    });
    expect(ws.logLines().filter((l) => l.level === 50 && l.stage === 'ingest').map((l) => l.finding)).toEqual(['changed', 'missing']);
    expect(await auditArchive(ws.db, ws.log, INCREMENTAL)).toEqual({ found: [], resolved: [], hashed: 0, skipped: 3 });
    expect(await openFindings(ws)).toEqual([
      ['prices_a.csv', 'archive: changed'],
      ['prices_b.csv', 'archive: missing'],
    ]);
  });

  it('misses a change that kept size and mtime until the full audit, which reads every file', async () => {
    ws = await tempWorkspace();
    const a = await ingestPrices(ws, 'prices_a.csv', 'EQ-A');
    // a whole second, which utimes sets back exactly
    const stamp = new Date('2026-04-10T18:00:00Z');
    utimesSync(a.movedTo, stamp, stamp);
    await auditArchive(ws.db, ws.log, INCREMENTAL);
    const size = statSync(a.movedTo).size;
    writeFileSync(a.movedTo, readFileSync(a.movedTo, 'utf8').replace('EQ-A,1', 'EQ-A,7'));
    utimesSync(a.movedTo, stamp, stamp);
    expect(statSync(a.movedTo).size).toBe(size);
    expect(await auditArchive(ws.db, ws.log, INCREMENTAL)).toMatchObject({ found: [], hashed: 0, skipped: 1 });
    expect(await auditArchive(ws.db, ws.log, FULL)).toMatchObject({ found: [{ fileId: a.fileId, finding: 'changed' }], hashed: 1 });
  });

  it('closes a finding when the bytes are restored, and opens a new one when they change again', async () => {
    ws = await tempWorkspace();
    const a = await ingestPrices(ws, 'prices_a.csv', 'EQ-A');
    const original = readFileSync(a.movedTo);
    appendFileSync(a.movedTo, '2026-04-13,EQ-A,2\n');
    await auditArchive(ws.db, ws.log, INCREMENTAL);
    expect(await openFindings(ws)).toEqual([['prices_a.csv', 'archive: changed']]);
    writeFileSync(a.movedTo, original);
    expect(await auditArchive(ws.db, ws.log, INCREMENTAL)).toMatchObject({ found: [], resolved: [a.fileId], hashed: 1 });
    expect(await openFindings(ws)).toEqual([]);
    rmSync(a.movedTo);
    expect((await auditArchive(ws.db, ws.log, INCREMENTAL)).found).toEqual([{ fileId: a.fileId, archivedPath: a.movedTo, finding: 'missing' }]);
    expect(await resolutions(ws)).toEqual([
      { file_id: a.fileId, finding: 'changed', resolution: 'restored' },
      { file_id: a.fileId, finding: 'missing', resolution: null },
    ]);
  });

  it('closes a finding once a delivery of the same name, or the same bytes under another name, arrives again', async () => {
    ws = await tempWorkspace();
    const a = await ingestPrices(ws, 'prices_a.csv', 'EQ-A');
    const b = await ingestPrices(ws, 'prices_b.csv', 'EQ-B');
    const bBytes = readFileSync(b.movedTo);
    appendFileSync(a.movedTo, '2026-04-13,EQ-A,2\n');
    rmSync(b.movedTo);
    await auditArchive(ws.db, ws.log, INCREMENTAL);
    expect(await openFindings(ws)).toHaveLength(2);
    // the sender sends the whole file again under its name (new bytes), and someone re-sends b's bytes as b2
    const again = await ingestFile(
      ws.db, ws.config, ws.log,
      writeCsv(ws.config.inbox, 'prices_a.csv', [['date', 'security_id', 'price'], ['2026-04-10', 'EQ-A', '1'], ['2026-04-13', 'EQ-A', '2']]),
    );
    expect(again.status).toBe('ingested');
    writeFileSync(path.join(ws.config.inbox, 'prices_b2.csv'), bBytes);
    const dup = await ingestFile(ws.db, ws.config, ws.log, path.join(ws.config.inbox, 'prices_b2.csv'));
    expect(dup).toMatchObject({ status: 'duplicate', duplicateOf: b.fileId });
    expect(await openFindings(ws)).toEqual([]);
    expect(await resolutions(ws)).toEqual([
      { file_id: a.fileId, finding: 'changed', resolution: `redelivered by file ${again.fileId}` },
      { file_id: b.fileId, finding: 'missing', resolution: `redelivered by file ${dup.fileId}` },
    ]);
    // still changed and still gone, but answered: the next full audit does not open them again
    expect((await auditArchive(ws.db, ws.log, FULL)).found).toEqual([]);
  });

  it('closes the findings of the file_ids in ingest.acknowledgedArchiveFiles and audits those files no more', async () => {
    ws = await tempWorkspace();
    const a = await ingestPrices(ws, 'prices_a.csv', 'EQ-A');
    appendFileSync(a.movedTo, '2026-04-13,EQ-A,2\n');
    await auditArchive(ws.db, ws.log, INCREMENTAL);
    const acknowledged = { acknowledged: [a.fileId!] };
    expect(await auditArchive(ws.db, ws.log, { full: true, ...acknowledged })).toMatchObject({ found: [], resolved: [a.fileId] });
    expect(await openFindings(ws)).toEqual([]);
    appendFileSync(a.movedTo, '2026-04-14,EQ-A,3\n');
    expect(await auditArchive(ws.db, ws.log, { full: true, ...acknowledged })).toEqual({ found: [], resolved: [], hashed: 0, skipped: 0 });
    // taken off the list, the file is audited again: its bytes still differ from those loaded
    expect((await auditArchive(ws.db, ws.log, INCREMENTAL)).found).toEqual([{ fileId: a.fileId, archivedPath: a.movedTo, finding: 'changed' }]);
  });
});
