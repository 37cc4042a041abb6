import { afterEach, describe, expect, it } from 'vitest';
import { refreshCheckedSecurities } from '../../src/checks/checkedSecurities.ts';
import type { Database } from '../../src/storage/database.ts';
import { insertRows } from '../helpers/rawRows.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';

// The list kept from the rows added since the last check must equal the set the check
// used to derive from every raw row (superseded snapshots included) on each call.
const FROM_EVERY_ROW = `
  select security_id from positions where quantity <> 0 and not is_cash(security_id)
  union
  select security_id from benchmarks where weight <> 0 and not is_cash(security_id)
  order by 1`;

const POSITIONS = ['date', 'portfolio_id', 'security_id', 'quantity'];
const BENCHMARKS = ['date', 'benchmark_id', 'security_id', 'weight'];

async function expectKeptEqualsEveryRow(db: Database): Promise<string[]> {
  await refreshCheckedSecurities(db);
  const kept = await db.all<{ security_id: string }>('select security_id from price_check_securities order by 1');
  expect(kept).toEqual(await db.all(FROM_EVERY_ROW));
  return kept.map((r) => r.security_id);
}

describe('refreshCheckedSecurities', () => {
  let ws: TempWorkspace | null = null;
  afterEach(() => {
    ws?.cleanup();
    ws = null;
  });

  it('adds the securities of later deliveries, keeps those of superseded rows, and starts over when rows are taken out', async () => {
    ws = await tempWorkspace();
    const { db } = ws;
    await insertRows(db, 'positions', POSITIONS, [
      [1, 1, '2026-01-05', 'acct-a', 'EQ-ALDER', 10],
      [1, 2, '2026-01-05', 'acct-a', 'CASH:USD', 500],
      [1, 3, '2026-01-05', 'acct-a', 'EQ-BIRCH', 0],
    ]);
    expect(await expectKeptEqualsEveryRow(db)).toEqual(['EQ-ALDER']);

    // a new day, and a correction of the first day's snapshot that drops EQ-ALDER: the raw rows still hold it
    await insertRows(db, 'positions', POSITIONS, [[2, 1, '2026-01-06', 'acct-a', 'EQ-CEDAR', 5]]);
    await insertRows(db, 'positions', POSITIONS, [[3, 1, '2026-01-05', 'acct-a', 'EQ-BIRCH', 7]]);
    expect(await expectKeptEqualsEveryRow(db)).toEqual(['EQ-ALDER', 'EQ-BIRCH', 'EQ-CEDAR']);

    // a benchmark constituent nobody holds; then nothing new: the list stands
    await insertRows(db, 'benchmarks', BENCHMARKS, [[4, 1, '2026-01-05', 'bm-a', 'EQ-DOGWOOD', 1]]);
    expect(await expectKeptEqualsEveryRow(db)).toEqual(['EQ-ALDER', 'EQ-BIRCH', 'EQ-CEDAR', 'EQ-DOGWOOD']);
    expect(await expectKeptEqualsEveryRow(db)).toHaveLength(4);

    // a delivery taken out again is no append: rebuilt, EQ-CEDAR gone
    await db.run('delete from positions where file_id = 2');
    expect(await expectKeptEqualsEveryRow(db)).toEqual(['EQ-ALDER', 'EQ-BIRCH', 'EQ-DOGWOOD']);
    // as many rows taken out as added (the count alone would not tell): rebuilt too
    await db.run('delete from positions where file_id = 3');
    await insertRows(db, 'positions', POSITIONS, [[5, 1, '2026-01-07', 'acct-a', 'EQ-ELM', 3]]);
    expect(await expectKeptEqualsEveryRow(db)).toEqual(['EQ-ALDER', 'EQ-DOGWOOD', 'EQ-ELM']);
  });
});
