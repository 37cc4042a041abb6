import { spawn } from 'node:child_process';
import { existsSync, linkSync, mkdtempSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { openDatabase } from '../../src/storage/database.ts';
import { bytesToPublish, spareOf } from '../../src/storage/diskRoom.ts';
import { heldByAnyProcess } from '../../src/storage/fileHolders.ts';
import { publishReadCopy } from '../../src/storage/readCopy.ts';
import { removeStaleReadCopies } from '../../src/storage/staleCopies.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';

// RISKFOLD_FAULT_DISK_ROOM stands for a disk with that many bytes besides the database:
// the free-space check sees it, less the read copy's size (common practice, no source:
// what statfs reports on a disk shared by the database and its copy).
describe('publishReadCopy on a disk with room for only one copy', () => {
  let ws: TempWorkspace | undefined;
  let room: string;
  beforeEach(async () => {
    ws = await tempWorkspace();
    room = path.join(ws.dir, 'disk-room');
    vi.stubEnv('RISKFOLD_FAULT_DISK_ROOM', room);
    writeFileSync(room, String(10 * 1024 ** 3));
    expect(await publishReadCopy(ws.db, ws.config, ws.log)).toEqual({ published: true });
  });
  afterEach(() => {
    vi.unstubAllEnvs();
    ws?.cleanup();
  });

  const needed = () => bytesToPublish(statSync(ws!.config.database).size);

  it('drops the old copy first when that makes room, so database and copy take about twice the database', async () => {
    await ws!.db.run("insert into securities (file_id, line, security_id, currency) values (0, 2, 'EQ-LARCH', 'USD')");
    await ws!.db.run('force checkpoint');
    // one copy fits, two do not
    writeFileSync(room, String(needed()));
    expect(await publishReadCopy(ws!.db, ws!.config, ws!.log)).toEqual({ published: true });
    expect(ws!.logLines().some((l) => l.msg === 'disk short: old read copy removed to make room for the new one')).toBe(true);
    const copy = await openDatabase(ws!.config.readCopy, { readOnly: true });
    try {
      expect(await copy.all("select security_id from securities where security_id = 'EQ-LARCH'")).toHaveLength(1);
    } finally {
      copy.close();
    }
  });

  it('leaves the old copy alone and says why in one line when even without it a copy would not fit', async () => {
    const before = statSync(ws!.config.readCopy).mtimeMs;
    writeFileSync(room, String(needed() - 1));
    const outcome = await publishReadCopy(ws!.db, ws!.config, ws!.log);
    expect(outcome.published).toBe(false);
    expect(outcome.published || outcome.reason).toMatch(/^read copy not published: \d+ MiB free in .+, a copy of the database needs \d+ MiB;[^\n]+$/);
    expect(statSync(ws!.config.readCopy).mtimeMs).toBe(before);
  });
});

/** The `inPlace` and `bytesWritten` of each publish's log record so far. */
const publishes = (ws: TempWorkspace) =>
  ws.logLines()
    .filter((l) => l.msg === 'read copy published')
    .map((l) => ({ inPlace: l.inPlace as boolean, bytesWritten: l.bytesWritten as number }));

async function securitiesIn(file: string): Promise<string[]> {
  const copy = await openDatabase(file, { readOnly: true });
  try {
    return (await copy.all<{ security_id: string }>('select security_id from securities order by security_id')).map((r) => r.security_id);
  } finally {
    copy.close();
  }
}

async function addSecurity(ws: TempWorkspace, id: string): Promise<void> {
  await ws.db.run(`insert into securities (file_id, line, security_id, currency) values (0, 2, '${id}', 'USD')`);
}

// The spare is the copy published before the current one (common practice, no source:
// an A/B pair of files swapped by rename, the idle one updated while nobody reads it).
describe('publishReadCopy with a spare copy', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  /** A workspace published twice, `first` added in between: the first copy (without it) is now the spare. */
  const withSpare = async (first: string) => {
    ws = await tempWorkspace();
    await publishReadCopy(ws.db, ws.config, ws.log); // no copy yet: a whole copy, no spare
    await addSecurity(ws, first);
    await publishReadCopy(ws.db, ws.config, ws.log); // the first copy becomes the spare
    return ws;
  };

  it('brings the spare up to date in place, writing only the blocks that changed, and the copy it replaces becomes the spare', async () => {
    ws = await withSpare('EQ-ALDER');
    expect(existsSync(spareOf(ws.config.readCopy))).toBe(true);
    await addSecurity(ws, 'EQ-BIRCH');
    await publishReadCopy(ws.db, ws.config, ws.log);
    const [first, second, third] = publishes(ws);
    expect([first.inPlace, second.inPlace, third.inPlace]).toEqual([false, false, true]);
    const size = statSync(ws.config.database).size;
    expect(third.bytesWritten).toBeGreaterThan(0);
    expect(third.bytesWritten).toBeLessThan(size);
    expect(await securitiesIn(ws.config.readCopy)).toEqual(['EQ-ALDER', 'EQ-BIRCH']);
    expect(await securitiesIn(spareOf(ws.config.readCopy))).toEqual(['EQ-ALDER']);
    // byte for byte the database (read once the worker's connection is closed: reading
    // its file from this process would end DuckDB's lock on it)
    ws.closeDb();
    expect(readFileSync(ws.config.readCopy).equals(readFileSync(ws.config.database))).toBe(true);
  });

  it('copies in whole while a reader still holds the spare, and that reader keeps reading the copy it opened', async () => {
    ws = await tempWorkspace();
    await addSecurity(ws, 'EQ-CEDAR');
    await publishReadCopy(ws.db, ws.config, ws.log);
    const reader = await openDatabase(ws.config.readCopy, { readOnly: true });
    try {
      await addSecurity(ws, 'EQ-DOGWOOD');
      await publishReadCopy(ws.db, ws.config, ws.log); // the reader's copy becomes the spare
      expect(heldByAnyProcess(spareOf(ws.config.readCopy))).toBe(true);
      await addSecurity(ws, 'EQ-ELM');
      await publishReadCopy(ws.db, ws.config, ws.log);
      expect(publishes(ws).map((p) => p.inPlace)).toEqual([false, false, false]);
      expect((await reader.all<{ security_id: string }>('select security_id from securities')).map((r) => r.security_id)).toEqual(['EQ-CEDAR']);
    } finally {
      reader.close();
    }
    expect(await securitiesIn(ws.config.readCopy)).toEqual(['EQ-CEDAR', 'EQ-DOGWOOD', 'EQ-ELM']);
    // once the reader is gone the next publish is in place again
    await publishReadCopy(ws.db, ws.config, ws.log);
    expect(publishes(ws).at(-1)!.inPlace).toBe(true);
    expect(await securitiesIn(ws.config.readCopy)).toEqual(['EQ-CEDAR', 'EQ-DOGWOOD', 'EQ-ELM']);
  });

  it('never updates in place a spare that is the read copy itself (a hard link made by hand)', async () => {
    ws = await withSpare('EQ-HAZEL');
    const spare = spareOf(ws.config.readCopy);
    rmSync(spare);
    linkSync(ws.config.readCopy, spare);
    await addSecurity(ws, 'EQ-HOLLY');
    await publishReadCopy(ws.db, ws.config, ws.log);
    expect(publishes(ws).at(-1)!.inPlace).toBe(false);
    expect(await securitiesIn(ws.config.readCopy)).toEqual(['EQ-HAZEL', 'EQ-HOLLY']);
  });

  it('mends a spare a kill left half-updated, and its stray link is removed at start', async () => {
    ws = await withSpare('EQ-FIR');
    const spare = spareOf(ws.config.readCopy);
    // garbage over the spare's second MiB and a cut end, as a kill mid-write might leave
    const bytes = readFileSync(spare);
    bytes.fill(0xab, 1 << 20, Math.min(bytes.length, 2 << 20));
    writeFileSync(spare, bytes.subarray(0, bytes.length - 4096));
    writeFileSync(`${spare}.next`, 'left by a kill');
    expect(removeStaleReadCopies(ws.config, ws.log)).toEqual([`${spare}.next`]);
    await addSecurity(ws, 'EQ-GUM');
    await publishReadCopy(ws.db, ws.config, ws.log);
    expect(publishes(ws).at(-1)!.inPlace).toBe(true);
    expect(await securitiesIn(ws.config.readCopy)).toEqual(['EQ-FIR', 'EQ-GUM']);
    ws.closeDb();
    expect(readFileSync(ws.config.readCopy).equals(readFileSync(ws.config.database))).toBe(true);
  });
});

describe('heldByAnyProcess', () => {
  it('sees a file another process holds open without a lock, and none once it closes', async () => {
    const dir = mkdtempSync(path.join(tmpdir(), 'riskfold-held-'));
    try {
      const file = path.join(dir, 'copy.duckdb');
      writeFileSync(file, 'x');
      expect(heldByAnyProcess(file)).toBe(false);
      expect(heldByAnyProcess(path.join(dir, 'absent'))).toBe(false);
      const holder = spawn(process.execPath, ['-e', 'require("node:fs").openSync(process.argv[1], "r"); console.log("open"); process.stdin.resume()', file], { stdio: ['pipe', 'pipe', 'inherit'] });
      await new Promise((resolve) => holder.stdout.once('data', resolve));
      expect(heldByAnyProcess(file)).toBe(true);
      holder.kill();
      await new Promise((resolve) => holder.once('exit', resolve));
      expect(heldByAnyProcess(file)).toBe(false);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});
