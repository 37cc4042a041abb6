-- Backs align_fx. Each delivered currency on each valuation date from its first rate on:
-- the last rate on or before the date, and how many valuation dates old it is.
-- Refilled from the date in the variable derived_from (src/storage/derived.ts sets it,
-- with derived_carry_from, the last valuation date before it; '-infinity' rebuilds all),
-- as the carried prices are (step 090): the rows before it stay (their rates and date
-- numbers did not change), each currency carries in its row of derived_carry_from, and
-- only the rates after that date are read.
delete from derived_aligned_fx
where date >= getvariable('derived_from');

insert into derived_aligned_fx
with valuation_dates as (
  select date, date_index
  from derived_valuation_dates
),

-- the rows kept before derived_from end on derived_carry_from: what each currency carries in
carried_in as (
  select currency, observed_on as date, rate, date_index - stale_days as observed_index
  from derived_aligned_fx
  where date = getvariable('derived_carry_from')
),

rates as (
  select date, currency, rate
  from clean_fx
  where date > coalesce(getvariable('derived_carry_from'), '-infinity'::date)
),

-- valuation dates passed when the rate was observed (staleness in valuation dates)
observed_now as (
  select r.*, coalesce(v.date_index, 0) as observed_index
  from rates r
  asof left join valuation_dates v on r.date >= v.date
),

observed as (
  select date, currency, rate, observed_index from carried_in
  union all
  select date, currency, rate, observed_index from observed_now
),

first_rate as (
  select currency, min(date) as first_rate_date
  from observed
  group by currency
),

currency_dates as (
  select f.currency, v.date, v.date_index
  from first_rate f
  join valuation_dates v on v.date >= f.first_rate_date and v.date >= getvariable('derived_from')
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

-- in date order, as step 090 writes its rows
select * from carried
order by date, currency;
