-- Backs ret_securities. Daily log return of each ever-held security between consecutive
-- valuation dates: log_return = ln(P_base_t / P_base_t-1) with P_base = price_local *
-- fx_rate (base currency), log_return_local the same in the security's own currency.
-- Null when either side is missing. Cash in the base currency has no rows: its return is
-- zero by definition. Cash in another currency (CASH:<code>) is a balance at price 1 in
-- that currency: its base-currency return is the fx log return ln(fx_t / fx_t-1), its
-- local return zero (SPEC section 3, round 2).
-- Refilled from the date in the variable derived_from (src/storage/derived.ts sets it;
-- '-infinity' rebuilds all): a return at t reads the carried prices and rates of t-1 and
-- t, which the earlier steps refill from the same date, so the returns before it stand
-- (a change at t-1 reaches t, which is after it). As in step 090, a security first held
-- before derived_from keeps its earlier rows; any other (new, or no longer held) is
-- derived whole (the list step 090 set, derived_whole_securities). It applies
-- base_currency and max_stale_days through the prices and rates: the refresh's
-- fingerprint carries both.
delete from derived_security_returns
where date >= getvariable('derived_from')
   or security_id not in (
     select security_id from derived_held_securities where first_held_on < getvariable('derived_from')
   );

-- derived_from_index: the first valuation date refilled (set by step 070)
insert into derived_security_returns
with settings as (
  select base_currency
  from pipeline_settings
),

-- every date: a few currencies, and a security derived whole needs its first ones
rates as (
  select currency, date, date_index, rate, is_stale
  from align_fx
),

-- from the date before the first refilled one, or from the first for one derived whole
prices as (
  select a.security_id, a.date, a.date_index, a.price_local, a.is_stale as price_is_stale, f.rate as fx_rate, f.is_stale as fx_is_stale
  from align_prices a
  left join rates f on f.currency = a.currency and f.date = a.date
  where a.date_index >= getvariable('derived_from_index') - 1 or list_contains(getvariable('derived_whole_securities'), a.security_id)
),

-- align_prices has a row for every valuation date from a security's first price on,
-- so the previous row is date_index - 1
paired as (
  select
    security_id,
    date,
    date_index,
    price_local,
    price_local * fx_rate as price_base,
    lag(price_local) over by_date as prev_price_local,
    lag(price_local * fx_rate) over by_date as prev_price_base,
    lag(date_index) over by_date as prev_date_index,
    -- carried price or rate at t: the return is 0 today and the move shows up later
    price_is_stale or coalesce(fx_is_stale, false) as is_stale
  from prices
  window by_date as (partition by security_id order by date_index)
),

returns as (
  select
    security_id,
    date,
    date_index,
    case when price_base > 0 and prev_price_base > 0 then ln(price_base / prev_price_base) end as log_return,
    case when price_local > 0 and prev_price_local > 0 then ln(price_local / prev_price_local) end as log_return_local,
    is_stale,
    price_base / prev_price_base - 1 as simple_return,
    price_base,
    prev_price_base
  from paired
  where prev_date_index is not null
    and (date_index >= getvariable('derived_from_index') or list_contains(getvariable('derived_whole_securities'), security_id))
),

-- held, or a benchmark's constituent (its return enters the benchmark's); step 066 keeps
-- the list, so no run scans the whole position history for it
foreign_cash as (
  select security_id, cash_currency(security_id) as currency
  from derived_held_securities
  cross join settings
  where is_cash(security_id) and not is_cash_in(security_id, settings.base_currency)
),

-- align_fx has a row for every valuation date from a currency's first rate on
cash_paired as (
  select
    c.security_id,
    f.date,
    f.date_index,
    f.rate,
    lag(f.rate) over by_date as prev_rate,
    lag(f.date_index) over by_date as prev_date_index,
    f.is_stale
  from foreign_cash c
  join rates f on f.currency = c.currency
  window by_date as (partition by c.security_id order by f.date_index)
),

cash_returns as (
  select
    security_id,
    date,
    date_index,
    case when rate > 0 and prev_rate > 0 then ln(rate / prev_rate) end as log_return,
    case when rate > 0 and prev_rate > 0 then 0.0::double end as log_return_local,
    is_stale,
    rate / prev_rate - 1 as simple_return,
    rate as price_base,
    prev_rate as prev_price_base
  from cash_paired
  where prev_date_index is not null
    and (date_index >= getvariable('derived_from_index') or list_contains(getvariable('derived_whole_securities'), security_id))
),

all_returns as (
  select * from returns
  union all
  select * from cash_returns
)

-- in date order: a reader of the last dates skips the row groups of the others
select security_id, date, date_index, log_return, log_return_local, is_stale, simple_return, price_base, prev_price_base
from all_returns
order by date_index, security_id;
