-- Backs align_prices. Each ever-held security (or benchmark constituent) on each valuation
-- date from its first price on: the last price on or before the date, and how many
-- valuation dates old it is.
-- Refilled from the date in the variable derived_from (src/storage/derived.ts sets it,
-- with derived_carry_from, the last valuation date before it; '-infinity' rebuilds all).
-- A security first held before derived_from keeps its rows before it and carries in the
-- row of derived_carry_from; any other (new, or no longer held) is derived whole.
delete from derived_aligned_prices
where date >= getvariable('derived_from')
   or security_id not in (
     select security_id from derived_held_securities where first_held_on < getvariable('derived_from')
   );

-- the securities derived whole (first held on or after derived_from), as a constant: a
-- filter on it reaches the scan of the raw prices, where a join would come only after
-- the latest delivery of every price ever delivered was found (a whole-table window on
-- every new day). A full rebuild reads every price anyway and filters nothing. Cash is
-- listed too (it has no price, so it filters nothing here): step 170 derives the
-- foreign balances' returns whole from the same list.
set variable derived_whole_securities = (
  select coalesce(list(security_id), []::varchar[])
  from derived_held_securities
  where first_held_on >= getvariable('derived_from')
);

insert into derived_aligned_prices
with valuation_dates as (
  select date, date_index
  from derived_valuation_dates
),

-- benchmark constituents too (step 066): tracking error needs their returns; cash has
-- no price (its returns are the fx rates')
held_securities as (
  select security_id, first_held_on < getvariable('derived_from') as keeps_earlier_rows
  from derived_held_securities
  where not is_cash(security_id)
),

-- the rows kept before derived_from end on derived_carry_from: what each carries in
carried_in as (
  select a.security_id, a.observed_on as date, a.price, a.price_currency as currency, a.date_index - a.stale_days as observed_index
  from derived_aligned_prices a
  semi join held_securities h on h.security_id = a.security_id and h.keeps_earlier_rows
  where a.date = getvariable('derived_carry_from')
),

-- a suspect price held out of risk (checks.suspectPrices.mode hold; step 085) is skipped
-- here, so the previous price is carried over its date, stale, until a delivery repeats
-- or corrects it. Not materialized: each use below takes its own date bound into
-- clean_prices, so a new day reads the recent prices, not the whole table
delivered_prices as not materialized (
  select p.date, p.security_id, p.price, p.currency
  from clean_prices p
  anti join derived_held_out_prices o on o.security_id = p.security_id and o.date = p.date
),

-- prices after the kept rows (those between derived_carry_from and derived_from fall on
-- no valuation date but may still be carried), and a new security's whole history
held_prices as (
  select p.*
  from delivered_prices p
  semi join held_securities h on h.security_id = p.security_id and h.keeps_earlier_rows
  where p.date > coalesce(getvariable('derived_carry_from'), '-infinity'::date)
  union all
  select p.*
  from delivered_prices p
  semi join held_securities h on h.security_id = p.security_id and not h.keeps_earlier_rows
  where getvariable('derived_from') = '-infinity'::date or list_contains(getvariable('derived_whole_securities'), p.security_id)
),

-- how many valuation dates had passed when the price was observed: staleness is
-- counted in valuation dates, and a price may come from a date that is not one
observed_now as (
  select p.*, coalesce(v.date_index, 0) as observed_index
  from held_prices p
  asof left join valuation_dates v on p.date >= v.date
),

observed as (
  select security_id, date, price, currency, observed_index from carried_in
  union all
  select security_id, date, price, currency, observed_index from observed_now
),

first_price as (
  select o.security_id, min(o.date) as first_price_date, any_value(h.keeps_earlier_rows) as keeps_earlier_rows
  from observed o
  join held_securities h on h.security_id = o.security_id
  group by o.security_id
),

security_dates as (
  select f.security_id, v.date, v.date_index
  from first_price f
  join valuation_dates v
    on v.date >= f.first_price_date
   and (not f.keeps_earlier_rows or v.date >= getvariable('derived_from'))
),

carried as (
  select
    d.security_id,
    d.date,
    d.date_index,
    o.price,
    o.currency as price_currency,
    o.date as observed_on,
    (d.date_index - o.observed_index)::integer as stale_days
  from security_dates d
  asof join observed o on o.security_id = d.security_id and d.date >= o.date
)

-- in date order: a full rebuild then lies in the table as a new day's rows are appended
-- (by date), so a reader of a few dates (the carry-in above, align_prices by date_index)
-- skips the row groups of the others
select * from carried
order by date, security_id;
