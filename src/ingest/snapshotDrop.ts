import { sqlString, type Database } from '../storage/database.ts';
import type { HoldReason } from './completeness.ts';

interface Drop {
  portfolio_id: string;
  date: string;
  prev_date: string;
  kept: number;
  held_before: number;
}

interface Verdict {
  /** Incoming snapshots with no earlier one from another file within the dates looked at. */
  unresolved: number;
  drop: Drop | null;
}

/**
 * How far before the file's first date the previous snapshots are looked for, widened
 * while a portfolio has none there; null: the whole history. A daily file finds its
 * portfolios' snapshots of the last business day in the first, narrow look.
 */
const LOOKBACK_DAYS: readonly (number | null)[] = [10, 400, null];

/**
 * A positions file just inserted (not yet committed) with fewer non-zero holdings for a
 * portfolio than `keepShare` of those of the snapshot in force before it (the latest one
 * on or before its date, from another file; a count: which securities is not compared)
 * is what a truncated delivery looks like.
 * Returns the first such portfolio as a hold reason, or null.
 */
export async function snapshotDrop(db: Database, fileId: number, keepShare: number): Promise<HoldReason | null> {
  const [span] = await db.all<{ first: string | null; last: string | null; earlier: boolean }>(
    `select strftime(min(date), '%Y-%m-%d') as first, strftime(max(date), '%Y-%m-%d') as last,
            exists (select 1 from positions where file_id <> $1 and date <= (select max(date) from positions where file_id = $1)) as earlier
     from positions where file_id = $1`,
    [fileId],
  );
  // the first positions file (a history) has nothing to compare with: no look at all
  if (span.first === null || span.last === null || !span.earlier) return null;
  for (const days of LOOKBACK_DAYS) {
    // a portfolio with a snapshot within the look has its latest one there: the answer for it is final
    const from = days === null ? `'-infinity'::date` : `${sqlString(span.first)}::date - ${days}`;
    const verdict = await dropWithin(db, fileId, keepShare, from, `${sqlString(span.last)}::date`);
    if (verdict.unresolved === 0 || days === null) return verdict.drop === null ? null : holdReason(verdict.drop, keepShare);
  }
  return null;
}

/**
 * The check over the other files' rows dated `from` .. `to` only (constant date
 * expressions): DuckDB skips the row groups of other dates instead of reading the whole
 * history.
 */
async function dropWithin(db: Database, fileId: number, keepShare: number, from: string, to: string): Promise<Verdict> {
  const [row] = await db.all<{ unresolved: number; first_drop: Drop | null }>(
    `with incoming as (
       select portfolio_id, date, count(*) filter (where quantity <> 0) as kept
       from positions where file_id = $1 group by portfolio_id, date
     ), others as (
       select portfolio_id, date, file_id, quantity from positions
       where date between ${from} and ${to} and file_id <> $1
     ), previous as (
       select i.portfolio_id, i.date, max(p.date) as prev_date
       from incoming i join others p on p.portfolio_id = i.portfolio_id and p.date <= i.date
       group by i.portfolio_id, i.date
     ), previous_file as (
       -- the latest delivery of that date is the snapshot in force (corrections win)
       select v.portfolio_id, v.date, v.prev_date, max(p.file_id) as prev_file
       from previous v join others p on p.portfolio_id = v.portfolio_id and p.date = v.prev_date
       group by v.portfolio_id, v.date, v.prev_date
     ), before as (
       select f.portfolio_id, f.date, f.prev_date, count(*) filter (where p.quantity <> 0) as held_before
       from previous_file f join others p on p.file_id = f.prev_file and p.portfolio_id = f.portfolio_id and p.date = f.prev_date
       group by f.portfolio_id, f.date, f.prev_date
     ), drops as (
       select i.portfolio_id, strftime(i.date, '%Y-%m-%d') as date, strftime(b.prev_date, '%Y-%m-%d') as prev_date,
              i.kept::integer as kept, b.held_before::integer as held_before
       from incoming i join before b using (portfolio_id, date)
       where i.kept < $2 * b.held_before
     )
     select (select count(*) from incoming i anti join previous v using (portfolio_id, date))::integer as unresolved,
            (select d from drops d order by d.date, d.portfolio_id limit 1) as first_drop`,
    [fileId, keepShare],
  );
  return { unresolved: row.unresolved, drop: row.first_drop };
}

function holdReason(drop: Drop, keepShare: number): HoldReason {
  return {
    code: 'snapshot_drop',
    reason:
      `portfolio ${drop.portfolio_id} on ${drop.date} has ${drop.kept} holdings against ${drop.held_before} in its snapshot of ${drop.prev_date}` +
      ` (fewer than ingest.snapshotKeepShare ${keepShare} of them); a truncated file looks like this.` +
      ` To load it, list the file in ingest.confirmedFiles or deliver the same file again`,
  };
}
