-- Each ever-held security on each valuation date from its first price on: the last price
-- on or before the date. Carrying a price across one market's holiday keeps the other
-- markets' returns daily; past max_stale_days valuation dates the price is left null
-- (history missing), never guessed. The carried prices are stored (step 090);
-- the settings and reference data apply here, so a changed config needs no rebuild.
create or replace view align_prices as
with settings as (
  select base_currency, max_stale_days
  from pipeline_settings
),

carried as (
  select security_id, date, date_index, price, price_currency, observed_on, stale_days
  from derived_aligned_prices
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
