-- One row per position snapshot (portfolio + date): the file that delivered it last, and
-- the date it is replaced by the portfolio's next snapshot (held_until, null while it is
-- the latest). Stored by step 020 (src/storage/derived.ts fills it): every view
-- below reads it, and a 25M-row aggregate per reference was the cost.
create or replace view clean_snapshots as
with stored as (
  select portfolio_id, snapshot_date, file_id, held_until
  from derived_snapshots
)

select * from stored;
