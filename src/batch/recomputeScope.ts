import type { IngestOutcome } from '../ingest/ingestFile.ts';
import type { Database } from '../storage/database.ts';

/** What one recompute must cover so that every ingested file is reflected in risk. */
export interface RecomputeScope {
  /** 'YYYY-MM-DD'; null: from the start of history. */
  from: string | null;
  /** null: every portfolio. */
  portfolios: string[] | null;
  /** File names the run covers, first the batch's own. */
  files: string[];
}

interface Touch {
  fileId: number;
  name: string;
  minDate: string | null;
  portfolios: string[] | null;
}

/**
 * Ingested files no finished run has covered yet: received before no `done` run that
 * started after them, reached back to their first date and included their portfolios.
 * A worker killed between the ingest commit and the recompute, or a recompute that
 * failed, leaves such files behind; the next batch (or start) picks them up.
 */
export async function uncoveredFiles(db: Database): Promise<Touch[]> {
  const rows = await db.all<{ file_id: number; name: string; min_date: string | null; portfolios: string[] | null }>(`
    with last_full_run as (
      -- a finished full backfill covers everything received before it: look only after it
      select coalesce(max(started_at), '-infinity'::timestamptz) as started_at
      from risk_runs where status = 'done' and from_date is null and portfolios is null
    ),
    ingested as (
      select f.file_id, f.name, f.kind, f.min_date, f.received_at
      from ingested_files f
      where f.status = 'ingested' and f.received_at > (select started_at from last_full_run)
    ),
    file_portfolios as (
      select p.file_id, list(distinct p.portfolio_id order by p.portfolio_id) as portfolios
      from positions p
      where p.file_id in (select file_id from ingested where kind = 'positions')
      group by p.file_id
    ),
    touches as (
      select i.*, case when i.kind = 'positions' then coalesce(fp.portfolios, []) end as portfolios
      from ingested i left join file_portfolios fp using (file_id)
    )
    select t.file_id, t.name, t.min_date, t.portfolios
    from touches t
    where not exists (
      select 1 from risk_runs r
      where r.status = 'done'
        and r.started_at > t.received_at
        and (r.from_date is null or r.from_date <= t.min_date)
        and (r.portfolios is null or (t.portfolios is not null and list_has_all(r.portfolios, t.portfolios)))
    )
    order by t.file_id`);
  return rows.map((r) => ({ fileId: r.file_id, name: r.name, minDate: r.min_date, portfolios: r.portfolios }));
}

/**
 * One scope for the batch's ingested files and any left uncovered before: the earliest
 * first date (null if any file has none: a reference-data file may change every date),
 * and the union of portfolios (null as soon as a non-positions file is in: prices and fx
 * move every portfolio).
 */
export function mergeScope(batch: IngestOutcome[], leftover: Touch[]): RecomputeScope | null {
  const touches: Touch[] = batch.flatMap((o) =>
    o.status === 'ingested' && o.fileId !== null ? [{ fileId: o.fileId, name: o.name, minDate: o.minDate, portfolios: o.portfolios }] : [],
  );
  for (const t of leftover) if (!touches.some((b) => b.fileId === t.fileId)) touches.push(t);
  if (touches.length === 0) return null;
  const from = touches.some((t) => t.minDate === null) ? null : touches.map((t) => t.minDate as string).sort()[0];
  const portfolios = touches.some((t) => t.portfolios === null)
    ? null
    : [...new Set(touches.flatMap((t) => t.portfolios as string[]))].sort();
  return { from, portfolios, files: touches.map((t) => t.name) };
}

/** `ingest:prices_20261130.csv` for one file, `ingest:prices_20261130.csv(+3)` for a batch. */
export function triggerFor(scope: RecomputeScope, prefix = 'ingest'): string {
  const more = scope.files.length > 1 ? `(+${scope.files.length - 1})` : '';
  return `${prefix}:${scope.files[0]}${more}`;
}
