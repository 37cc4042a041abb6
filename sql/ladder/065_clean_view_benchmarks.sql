-- Benchmark weights of the snapshots in force: a benchmarks file delivers a benchmark's
-- whole list of constituents on a date, so the latest file for a date+benchmark replaces
-- the earlier one entirely (a constituent missing from it is gone), as for positions.
-- held_until is the benchmark's next snapshot date, null while it is the latest.
create or replace view clean_benchmarks as
with delivered as (
  select date, benchmark_id, security_id, weight, file_id, line
  from benchmarks
),

latest_file as (
  select benchmark_id, date, max(file_id) as file_id
  from delivered
  group by benchmark_id, date
),

with_successor as (
  select *, lead(date) over (partition by benchmark_id order by date) as held_until
  from latest_file
),

rows_of_latest_file as (
  select d.date, d.benchmark_id, d.security_id, d.weight, d.file_id, d.line, s.held_until
  from delivered d
  join with_successor s on s.benchmark_id = d.benchmark_id and s.date = d.date and s.file_id = d.file_id
)

select * from rows_of_latest_file;
