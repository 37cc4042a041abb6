-- Each benchmark's weights on each valuation date on or after its first snapshot: the rows
-- of its most recent snapshot on or before the date (a snapshot holds until the next one).
-- Zero weights are dropped, as zero quantities are for positions.
create or replace view hold_benchmark_weights as
with valuation_dates as (
  select date, date_index
  from align_valuation_dates
),

snapshots as (
  select distinct benchmark_id, date as snapshot_date
  from clean_benchmarks
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
