-- Each ever-held security on each valuation date from its first price on: the last price
-- on or before the date. Carrying a price across one market's holiday keeps the other
-- markets' returns daily; past max_stale_days valuation dates the price is left null
-- (history missing), never guessed.
create or replace view align_prices as
with settings as (
  select base_currency, max_stale_days
  from pipeline_settings
),

valuation_dates as (
  select date, date_index
  from align_valuation_dates
),

held_securities as (
  select distinct security_id
  from clean_positions
  where quantity <> 0 and security_id not like 'CASH:%'
),

held_prices as (
  select p.date, p.security_id, p.price, p.currency
  from clean_prices p
  semi join held_securities h on h.security_id = p.security_id
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
    d.date_index - o.observed_index as stale_days
  from security_dates d
  asof join observed o on o.security_id = d.security_id and d.date >= o.date
),

-- a price row without a currency is in the security's currency, else the base currency
with_currency as (
  select c.*, coalesce(c.price_currency, s.currency, settings.base_currency) as currency
  from carried c
  cross join settings
  left join clean_securities s on s.security_id = c.security_id
),

limited as (
  select
    w.date,
    w.security_id,
    w.currency,
    case when w.stale_days <= settings.max_stale_days then w.price end as price_local,
    w.observed_on,
    w.stale_days,
    w.stale_days > 0 as is_stale,
    w.date_index
  from with_currency w
  cross join settings
)

select * from limited;
