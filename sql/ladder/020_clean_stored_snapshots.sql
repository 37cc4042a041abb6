-- Backs clean_snapshots. One row per position snapshot (portfolio + date): the file that
-- delivered it last, and the date it is replaced by the portfolio's next snapshot. A
-- snapshot is the whole portfolio, so a later file for the same date+portfolio replaces it.
insert into derived_snapshots
with delivered as (
  select portfolio_id, date as snapshot_date, file_id
  from positions
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
