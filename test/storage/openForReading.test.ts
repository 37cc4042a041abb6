import { afterEach, describe, expect, it } from 'vitest';
import { RiskfoldError } from '../../src/errors.ts';
import { openForReading } from '../../src/storage/workspace.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';

describe('openForReading', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  it('opens a database the current code has upgraded', async () => {
    ws = await tempWorkspace();
    ws.closeDb();
    const { db, source } = await openForReading(ws.config);
    try {
      expect(source).toBe('database');
      expect(await db.all('select 1 as one')).toEqual([{ one: 1 }]);
    } finally {
      db.close();
    }
  });

  it('refuses, naming what to run, a database an older riskfold wrote (a migration not recorded)', async () => {
    ws = await tempWorkspace();
    const [latest] = await ws.db.all<{ name: string; version: number }>('select name, version from schema_version order by version desc limit 1');
    await ws.db.run('delete from schema_version where version = $1', [latest.version]);
    ws.closeDb();
    const opened = openForReading(ws.config);
    await expect(opened).rejects.toBeInstanceOf(RiskfoldError);
    await expect(opened).rejects.toMatchObject({ kind: 'schema_outdated' });
    await expect(opened).rejects.toThrow(/was written by an older riskfold \(missing \d{4}_\w+\.sql\): run "riskfold ingest" once/);
  });
});
