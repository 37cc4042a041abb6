-- Position rows of the snapshots in effect (see clean_snapshots): a security missing from
-- a newer snapshot file for the same date+portfolio is gone, not kept from the older file.
-- Ingest rejects a file that lists a security twice for one date+portfolio, so a row is
-- unique per date, portfolio_id and security_id.
create or replace view clean_positions as
with delivered as (
  select date, portfolio_id, security_id, quantity, file_id, line
  from positions
),

snapshots as (
  select portfolio_id, snapshot_date, file_id, held_until
  from clean_snapshots
),

rows_of_latest_file as (
  select d.date, d.portfolio_id, d.security_id, d.quantity, d.file_id, d.line, s.held_until
  from delivered d
  join snapshots s
    on s.portfolio_id = d.portfolio_id and s.snapshot_date = d.date and s.file_id = d.file_id
)

select * from rows_of_latest_file;
