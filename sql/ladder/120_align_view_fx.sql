-- Each currency on each valuation date from its first rate on: the last rate on or
-- before the date, carried for at most max_stale_days valuation dates like prices, then
-- null. The base currency has rate 1 on every valuation date. The carried rates are
-- stored (step 110); the settings apply here.
create or replace view align_fx as
with settings as (
  select base_currency, max_stale_days
  from pipeline_settings
),

valuation_dates as (
  select date, date_index
  from align_valuation_dates
),

carried as (
  select currency, date, date_index, rate, observed_on, stale_days
  from derived_aligned_fx
),

foreign_limited as (
  select
    c.date,
    c.currency,
    case when c.stale_days <= settings.max_stale_days then c.rate end as rate,
    c.observed_on,
    c.stale_days,
    c.stale_days > 0 as is_stale,
    c.date_index
  from carried c
  cross join settings
  where c.currency <> settings.base_currency
),

base_rate as (
  select v.date, settings.base_currency as currency, 1.0::double as rate, v.date as observed_on, 0 as stale_days, false as is_stale, v.date_index
  from valuation_dates v
  cross join settings
),

all_rates as (
  select * from foreign_limited
  union all
  select * from base_rate
)

select * from all_rates;
