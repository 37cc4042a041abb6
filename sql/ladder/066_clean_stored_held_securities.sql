-- Backs the carried prices (step 090, which leaves cash aside) and the fx returns of
-- cash in another currency (step 170): every security with a non-zero quantity in a
-- snapshot in force or a non-zero weight in a benchmark snapshot in force (tracking
-- error needs the constituents' returns), cash included, and the first such snapshot date.
-- Refilled from the date in the variable derived_from (src/storage/derived.ts sets it;
-- '-infinity' rebuilds all): a security first held before it keeps its row, since the
-- snapshots before that date did not change; the others are derived from the snapshots
-- on or after it (a corrected snapshot may drop the only holding of one).
delete from derived_held_securities
where first_held_on >= getvariable('derived_from');

insert into derived_held_securities
with held_rows as (
  select security_id, date
  from clean_positions
  where quantity <> 0 and date >= getvariable('derived_from')
  union all
  select security_id, date
  from clean_benchmarks
  where weight <> 0 and date >= getvariable('derived_from')
),

first_held as (
  select security_id, min(date) as first_held_on
  from held_rows
  group by security_id
),

not_held_before as (
  select f.*
  from first_held f
  anti join derived_held_securities h on h.security_id = f.security_id
)

select * from not_held_before;
