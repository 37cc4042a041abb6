-- Each benchmark's weights on each valuation date on or after its first snapshot: the rows
-- of its most recent snapshot on or before the date (a snapshot holds until the next one).
-- Zero weights are dropped, as zero quantities are for positions.
-- hold_benchmark_weights_since(first_date_index) gives the rows from that valuation date
-- on, reading only the snapshots those dates need (as hold_daily_positions_since).
create or replace macro hold_benchmark_weights_since(first_date_index) as table
with valuation_dates as (
  select date, date_index
  from align_valuation_dates
  where date_index >= first_date_index
),

-- only the snapshots still in effect on or after the first date (held_until: the next one)
snapshots as (
  select distinct benchmark_id, date as snapshot_date
  from clean_benchmarks
  where held_until is null or held_until > (select min(date) from valuation_dates)
),

first_snapshot as (
  select benchmark_id, min(snapshot_date) as first_snapshot_date
  from snapshots
  group by benchmark_id
),

benchmark_dates as (
  select f.benchmark_id, v.date, v.date_index
  from first_snapshot f
  join valuation_dates v on v.date >= f.first_snapshot_date
),

snapshot_in_effect as (
  select d.benchmark_id, d.date, d.date_index, s.snapshot_date
  from benchmark_dates d
  asof join snapshots s on s.benchmark_id = d.benchmark_id and d.date >= s.snapshot_date
),

held as (
  select e.benchmark_id, e.date, b.security_id, is_cash(b.security_id) as is_cash, b.weight, e.snapshot_date, e.date_index
  from snapshot_in_effect e
  join clean_benchmarks b on b.benchmark_id = e.benchmark_id and b.date = e.snapshot_date
  where b.weight <> 0
)

select * from held;

create or replace view hold_benchmark_weights as
select * from hold_benchmark_weights_since(1);
