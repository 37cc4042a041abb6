-- Each currency on each valuation date from its first rate on: the last rate on or
-- before the date, carried for at most max_stale_days valuation dates like prices, then
-- null. The base currency has rate 1 on every valuation date.
create or replace view align_fx as
with settings as (
  select base_currency, max_stale_days
  from pipeline_settings
),

valuation_dates as (
  select date, date_index
  from align_valuation_dates
),

foreign_rates as (
  select f.date, f.currency, f.rate
  from clean_fx f
  cross join settings
  where f.currency <> settings.base_currency
),

-- valuation dates passed when the rate was observed (staleness in valuation dates)
observed as (
  select r.*, coalesce(v.date_index, 0) as observed_index
  from foreign_rates r
  asof left join valuation_dates v on r.date >= v.date
),

first_rate as (
  select currency, min(date) as first_rate_date
  from foreign_rates
  group by currency
),

currency_dates as (
  select f.currency, v.date, v.date_index
  from first_rate f
  join valuation_dates v on v.date >= f.first_rate_date
),

carried as (
  select
    d.currency,
    d.date,
    d.date_index,
    o.rate,
    o.date as observed_on,
    d.date_index - o.observed_index as stale_days
  from currency_dates d
  asof join observed o on o.currency = d.currency and d.date >= o.date
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
