-- Each portfolio on each valuation date on or after its first snapshot: the rows of its
-- most recent snapshot on or before the date (a snapshot holds at the close of its date
-- until the next one). Zero quantities are dropped: the security is not held.
-- hold_daily_positions_since(first_date_index) gives the rows from that valuation date on,
-- reading only the positions those dates need (a run's read must not grow with history).
create or replace macro hold_daily_positions_since(first_date_index) as table
with valuation_dates as (
  select date, date_index
  from align_valuation_dates
  where date_index >= first_date_index
),

-- only the snapshots still in effect on or after the first date: one replaced before it
-- (held_until on or before that date) is never the latest on a date read, and joining
-- every date to every older snapshot made the read grow with history
snapshots as (
  select portfolio_id, snapshot_date
  from clean_snapshots
  where held_until is null or held_until > (select min(date) from valuation_dates)
),

first_snapshot as (
  select portfolio_id, min(snapshot_date) as first_snapshot_date
  from snapshots
  group by portfolio_id
),

portfolio_dates as (
  select f.portfolio_id, v.date, v.date_index
  from first_snapshot f
  join valuation_dates v on v.date >= f.first_snapshot_date
),

snapshot_in_effect as (
  select d.portfolio_id, d.date, d.date_index, s.snapshot_date
  from portfolio_dates d
  asof join snapshots s on s.portfolio_id = d.portfolio_id and d.date >= s.snapshot_date
),

held as (
  select e.portfolio_id, e.date, p.security_id, p.quantity, e.snapshot_date, e.date_index
  from snapshot_in_effect e
  join clean_positions p on p.portfolio_id = e.portfolio_id and p.date = e.snapshot_date
  where p.quantity <> 0
)

select * from held;

create or replace view hold_daily_positions as
select * from hold_daily_positions_since(1);
