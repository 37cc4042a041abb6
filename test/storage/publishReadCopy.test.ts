import { statSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { openDatabase } from '../../src/storage/database.ts';
import { bytesToPublish } from '../../src/storage/diskRoom.ts';
import { publishReadCopy } from '../../src/storage/workspace.ts';
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
