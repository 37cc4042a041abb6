-- Backs align_valuation_dates. Valuation dates: the dates on which at least one held
-- security has a price. "Held" means a non-zero quantity in some portfolio's snapshot in
-- effect on that date; cash has no market, so it never makes a date. date_index numbers
-- them 1, 2, 3, ...
-- Refilled from the date in the variable derived_from (src/storage/derived.ts sets it;
-- '-infinity' rebuilds all): the dates before it stay with their numbers, the dates on or
-- after it are derived again from the prices of those dates and the snapshots in force
-- then, and numbered on.
delete from derived_valuation_dates
where date >= getvariable('derived_from');

insert into derived_valuation_dates
with held_rows as (
  select security_id, date as held_from, coalesce(held_until, 'infinity'::date) as held_until
  from clean_positions
  where quantity <> 0 and not is_cash(security_id)
    -- a snapshot replaced before derived_from holds nothing on or after it
    and coalesce(held_until, 'infinity'::date) > getvariable('derived_from')
),

-- per security and start date, the furthest end over all portfolios
held_spans as (
  select security_id, held_from, max(held_until) as held_until
  from held_rows
  group by security_id, held_from
),

-- running furthest end: a date is held if the last span that started on or before it
-- reaches past it (spans of different portfolios overlap, so take the max so far)
held_reach as (
  select
    security_id,
    held_from,
    max(held_until) over (partition by security_id order by held_from rows between unbounded preceding and current row) as held_until
  from held_spans
),

security_prices as (
  select date, security_id
  from clean_prices
  where not is_cash(security_id) and date >= getvariable('derived_from')
),

held_price_dates as (
  select distinct p.date
  from security_prices p
  asof join held_reach h on h.security_id = p.security_id and p.date >= h.held_from
  where p.date < h.held_until
),

dates_before as (
  select count(*) as n
  from derived_valuation_dates
),

numbered as (
  select date, (dates_before.n + row_number() over (order by date))::integer as date_index
  from held_price_dates
  cross join dates_before
)

select * from numbered;

-- the first valuation date refilled, as a constant: the later steps that derive by
-- date_index (155, 175) filter their macros by it (past the last date when none is)
set variable derived_from_index = (
  select coalesce(min(date_index), (select count(*) + 1 from derived_valuation_dates))::integer
  from derived_valuation_dates
  where date >= getvariable('derived_from')
);
