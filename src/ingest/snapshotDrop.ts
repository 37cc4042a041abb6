import type { Database } from '../storage/database.ts';
import type { HoldReason } from './completeness.ts';

interface Drop {
  portfolio_id: string;
  date: string;
  prev_date: string;
  kept: number;
  held_before: number;
}

/**
 * A positions file just inserted (not yet committed) that keeps fewer than `keepShare` of
 * a portfolio's non-zero holdings of the snapshot in force before it (the latest one on
 * or before its date, from another file) is what a truncated delivery looks like.
 * Returns the first such portfolio as a hold reason, or null.
 */
export async function snapshotDrop(db: Database, fileId: number, keepShare: number): Promise<HoldReason | null> {
  const [drop] = await db.all<Drop>(
    `with incoming as (
       select portfolio_id, date, count(*) filter (where quantity <> 0) as kept
       from positions where file_id = $1 group by portfolio_id, date
     ), previous as (
       select i.portfolio_id, i.date, max(p.date) as prev_date
       from incoming i join positions p on p.portfolio_id = i.portfolio_id and p.date <= i.date and p.file_id <> $1
       group by i.portfolio_id, i.date
     ), previous_file as (
       -- the latest delivery of that date is the snapshot in force (corrections win)
       select v.portfolio_id, v.date, v.prev_date, max(p.file_id) as prev_file
       from previous v join positions p on p.portfolio_id = v.portfolio_id and p.date = v.prev_date and p.file_id <> $1
       group by v.portfolio_id, v.date, v.prev_date
     ), before as (
       select f.portfolio_id, f.date, f.prev_date, count(*) filter (where p.quantity <> 0) as held_before
       from previous_file f join positions p on p.file_id = f.prev_file and p.portfolio_id = f.portfolio_id and p.date = f.prev_date
       group by f.portfolio_id, f.date, f.prev_date
     )
     select i.portfolio_id, strftime(i.date, '%Y-%m-%d') as date, strftime(b.prev_date, '%Y-%m-%d') as prev_date,
            i.kept::integer as kept, b.held_before::integer as held_before
     from incoming i join before b using (portfolio_id, date)
     where i.kept < $2 * b.held_before
     order by i.date, i.portfolio_id limit 1`,
    [fileId, keepShare],
  );
  if (!drop) return null;
  return {
    code: 'snapshot_drop',
    reason:
      `portfolio ${drop.portfolio_id} on ${drop.date} keeps ${drop.kept} of the ${drop.held_before} holdings of its snapshot of ${drop.prev_date}` +
      ` (below ingest.snapshotKeepShare ${keepShare}); a truncated file looks like this.` +
      ` To load it, list the file in ingest.confirmedFiles or deliver the same file again`,
  };
}
