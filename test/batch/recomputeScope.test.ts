import { afterEach, describe, expect, it } from 'vitest';
import type { IngestOutcome } from '../../src/ingest/ingestFile.ts';
import { mergeScope, triggerFor, uncoveredFiles } from '../../src/batch/recomputeScope.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';

function outcome(partial: Partial<IngestOutcome> & { fileId: number; name: string }): IngestOutcome {
  return { status: 'ingested', kind: 'prices', rows: 1, minDate: null, portfolios: null, movedTo: '', ...partial };
}

describe('mergeScope', () => {
  it('takes the earliest first date and the union of portfolios of positions-only batches', () => {
    const scope = mergeScope(
      [
        outcome({ fileId: 1, name: 'positions_b.csv', kind: 'positions', minDate: '2026-03-05', portfolios: ['acct-income'] }),
        outcome({ fileId: 2, name: 'positions_a.csv', kind: 'positions', minDate: '2026-03-02', portfolios: ['acct-growth'] }),
      ],
      [],
    );
    expect(scope).toEqual({ from: '2026-03-02', portfolios: ['acct-growth', 'acct-income'], files: ['positions_b.csv', 'positions_a.csv'] });
    expect(triggerFor(scope!)).toBe('ingest:positions_b.csv(+1)');
  });

  it('widens to every portfolio with a prices file, and to all history with a file of no date', () => {
    const scope = mergeScope(
      [
        outcome({ fileId: 1, name: 'positions_a.csv', kind: 'positions', minDate: '2026-03-02', portfolios: ['acct-growth'] }),
        outcome({ fileId: 2, name: 'prices_a.csv', minDate: '2026-03-04' }),
      ],
      [],
    );
    expect(scope).toMatchObject({ from: '2026-03-02', portfolios: null });
    expect(mergeScope([outcome({ fileId: 3, name: 'securities.csv', kind: 'securities', minDate: null })], [])?.from).toBeNull();
  });

  it('needs no run when nothing was ingested, and adds leftovers of an earlier batch once', () => {
    expect(mergeScope([outcome({ fileId: 1, name: 'prices_a.csv', status: 'duplicate' })], [])).toBeNull();
    const leftover = [
      { fileId: 1, name: 'prices_old.csv', minDate: '2026-02-27', portfolios: null },
      { fileId: 2, name: 'prices_new.csv', minDate: '2026-03-02', portfolios: null },
    ];
    const scope = mergeScope([outcome({ fileId: 2, name: 'prices_new.csv', minDate: '2026-03-02' })], leftover);
    expect(scope).toEqual({ from: '2026-02-27', portfolios: null, files: ['prices_new.csv', 'prices_old.csv'] });
  });
});

describe('uncoveredFiles', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  async function file(id: number, name: string, kind: string, minDate: string | null, receivedAt: string) {
    await ws!.db.run(
      `insert into ingested_files (file_id, name, sha256, kind, rows, status, received_at, min_date)
       values ($1, $2, $3, $4, 1, 'ingested', $5::timestamptz, $6::date)`,
      [id, name, `sha-${id}`, kind, receivedAt, minDate],
    );
  }
  async function run(id: number, startedAt: string, from: string | null, portfolios: string | null, status = 'done') {
    await ws!.db.run(
      `insert into risk_runs (run_id, trigger, from_date, portfolios, started_at, status)
       values ($1, 'test', $2::date, $3::varchar[], $4::timestamptz, $5)`,
      [id, from, portfolios, startedAt, status],
    );
  }

  it('lists ingested files no finished run reached since they arrived', async () => {
    ws = await tempWorkspace();
    await file(1, 'prices_1.csv', 'prices', '2026-03-02', '2026-03-02 20:00:00+00');
    await file(2, 'prices_2.csv', 'prices', '2026-03-03', '2026-03-03 20:00:00+00');
    await file(3, 'positions_3.csv', 'positions', '2026-03-03', '2026-03-03 20:00:00+00');
    await ws.db.run("insert into positions values (3, 1, '2026-03-03', 'acct-growth', 'EQ-NORDWIND', 10)");
    await file(4, 'prices_4.csv', 'prices', '2026-02-20', '2026-03-04 20:00:00+00');
    await file(5, 'prices_5.csv', 'prices', '2026-03-05', '2026-03-05 20:00:00+00');
    await run(1, '2026-03-02 20:01:00+00', '2026-03-02', null); // covers file 1
    await run(2, '2026-03-03 20:01:00+00', '2026-03-03', "['acct-growth']"); // only a portfolio: covers file 3, not 2
    await run(3, '2026-03-04 20:01:00+00', '2026-03-01', null); // starts after file 4's first date: not covered
    await run(4, '2026-03-05 20:01:00+00', null, null, 'failed'); // failed: covers nothing
    const names = (await uncoveredFiles(ws.db)).map((f) => f.name);
    expect(names).toEqual(['prices_4.csv', 'prices_5.csv']);
    // file 2 was covered by run 3 (from 2026-03-01, every portfolio, after it arrived)
  });

  it('counts everything received before a finished full backfill as covered', async () => {
    ws = await tempWorkspace();
    await file(1, 'prices_1.csv', 'prices', null, '2026-03-02 20:00:00+00');
    await file(2, 'securities_2.csv', 'securities', null, '2026-03-03 20:00:00+00');
    await run(1, '2026-03-04 08:00:00+00', null, null);
    await file(3, 'prices_3.csv', 'prices', '2026-03-04', '2026-03-04 20:00:00+00');
    expect((await uncoveredFiles(ws.db)).map((f) => f.name)).toEqual(['prices_3.csv']);
  });

  it('gives a positions file its portfolios from the rows it delivered', async () => {
    ws = await tempWorkspace();
    await file(7, 'positions_7.csv', 'positions', '2026-03-03', '2026-03-03 20:00:00+00');
    await ws.db.run(
      "insert into positions values (7, 1, '2026-03-03', 'acct-income', 'BD-KESTREL-28', 5), (7, 2, '2026-03-03', 'acct-growth', 'EQ-NORDWIND', 10)",
    );
    expect(await uncoveredFiles(ws.db)).toEqual([
      { fileId: 7, name: 'positions_7.csv', minDate: '2026-03-03', portfolios: ['acct-growth', 'acct-income'] },
    ]);
  });
});
