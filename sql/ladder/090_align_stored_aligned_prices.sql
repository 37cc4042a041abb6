-- Backs align_prices. Each ever-held security (or benchmark constituent) on each valuation
-- date from its first price on: the last price on or before the date, and how many
-- valuation dates old it is.
insert into derived_aligned_prices
with valuation_dates as (
  select date, date_index
  from derived_valuation_dates
),

-- benchmark constituents too: tracking error needs their returns (they make no valuation date)
held_securities as (
  select security_id
  from clean_positions
  where quantity <> 0 and security_id not like 'CASH:%'
  union
  select security_id
  from clean_benchmarks
  where weight <> 0 and security_id not like 'CASH:%'
),

-- a suspect price held out of risk (checks.suspectPrices.mode hold) is skipped here, so
-- the previous price is carried over its date, stale, until a delivery repeats or corrects it
held_out as (
  select security_id, date
  from price_checks
  where held and cleared_at is null
),

held_prices as (
  select p.date, p.security_id, p.price, p.currency
  from clean_prices p
  semi join held_securities h on h.security_id = p.security_id
  anti join held_out o on o.security_id = p.security_id and o.date = p.date
),

-- how many valuation dates had passed when the price was observed: staleness is
-- counted in valuation dates, and a price may come from a date that is not one
observed as (
  select p.*, coalesce(v.date_index, 0) as observed_index
  from held_prices p
  asof left join valuation_dates v on p.date >= v.date
),

first_price as (
  select security_id, min(date) as first_price_date
  from held_prices
  group by security_id
),

security_dates as (
  select f.security_id, v.date, v.date_index
  from first_price f
  join valuation_dates v on v.date >= f.first_price_date
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

select * from carried;
