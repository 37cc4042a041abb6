-- Backs the returns of cash in another currency (step 170): every cash balance with a
-- non-zero quantity in a snapshot in force or a non-zero weight in a benchmark snapshot
-- in force, and the first such snapshot date; step 066 keeps the other securities.
-- Refilled from the date in the variable derived_from (src/storage/derived.ts sets it;
-- '-infinity' rebuilds all), the same way: a balance first held before it keeps its row,
-- the others are derived from the snapshots on or after it.
delete from derived_held_cash
where first_held_on >= getvariable('derived_from');

insert into derived_held_cash
with held_rows as (
  select security_id, date
  from clean_positions
  where quantity <> 0 and is_cash(security_id) and date >= getvariable('derived_from')
  union all
  select security_id, date
  from clean_benchmarks
  where weight <> 0 and is_cash(security_id) and date >= getvariable('derived_from')
),

first_held as (
  select security_id, min(date) as first_held_on
  from held_rows
  group by security_id
),

not_held_before as (
  select f.*
  from first_held f
  anti join derived_held_cash h on h.security_id = f.security_id
)

select * from not_held_before;
