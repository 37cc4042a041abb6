-- Backs align_fx. Each delivered currency on each valuation date from its first rate on:
-- the last rate on or before the date, and how many valuation dates old it is.
-- Rebuilt whole at every refresh: a few currencies, so it costs little, and the date
-- numbers it copies may have moved.
delete from derived_aligned_fx;

insert into derived_aligned_fx
with valuation_dates as (
  select date, date_index
  from derived_valuation_dates
),

rates as (
  select date, currency, rate
  from clean_fx
),

-- valuation dates passed when the rate was observed (staleness in valuation dates)
observed as (
  select r.*, coalesce(v.date_index, 0) as observed_index
  from rates r
  asof left join valuation_dates v on r.date >= v.date
),

first_rate as (
  select currency, min(date) as first_rate_date
  from rates
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
    (d.date_index - o.observed_index)::integer as stale_days
  from currency_dates d
  asof join observed o on o.currency = d.currency and d.date >= o.date
)

select * from carried;
