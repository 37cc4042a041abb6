-- Backs clean_snapshots. One row per position snapshot (portfolio + date): the file that
-- delivered it last, and the date it is replaced by the portfolio's next snapshot. A
-- snapshot is the whole portfolio, so a later file for the same date+portfolio replaces it.
-- Refilled from the date in the variable derived_from (src/storage/derived.ts sets it;
-- '-infinity' rebuilds all): the snapshots on or after it are derived again from the
-- positions of those dates, and each portfolio's last earlier snapshot is held until the
-- first of them.
delete from derived_snapshots
where snapshot_date >= getvariable('derived_from');

insert into derived_snapshots
with delivered as (
  select portfolio_id, date as snapshot_date, file_id
  from positions
  where date >= getvariable('derived_from')
),

latest_file as (
  select portfolio_id, snapshot_date, max(file_id) as file_id
  from delivered
  group by portfolio_id, snapshot_date
),

-- a snapshot holds at the close of its date until (excluding) the next one;
-- held_until is null while it is the portfolio's latest
with_successor as (
  select
    portfolio_id,
    snapshot_date,
    file_id,
    lead(snapshot_date) over (partition by portfolio_id order by snapshot_date) as held_until
  from latest_file
)

select * from with_successor;

update derived_snapshots d
set held_until = (
  select min(n.snapshot_date)
  from derived_snapshots n
  where n.portfolio_id = d.portfolio_id and n.snapshot_date >= getvariable('derived_from')
)
where d.snapshot_date < getvariable('derived_from')
  and (d.held_until is null or d.held_until >= getvariable('derived_from'));
