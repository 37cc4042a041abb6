-- Market value of each held position in the base currency:
-- value_base = quantity * price_local * fx_rate. Cash (CASH:<CCY>) is a balance at price 1
-- in its currency. A missing price or fx rate leaves the value null, never guessed.
-- value_positions_since(first_date_index): the same from that valuation date on.
create or replace macro value_positions_since(first_date_index) as table
with settings as (
  select base_currency
  from pipeline_settings
),

held as (
  select portfolio_id, date, date_index, security_id, quantity, snapshot_date, is_cash(security_id) as is_cash
  from hold_daily_positions_since(first_date_index)
),

prices as (
  select security_id, date, currency, price_local, observed_on, stale_days
  from align_prices
  where date_index >= first_date_index
),

rates as (
  select currency, date, rate, observed_on, stale_days
  from align_fx
  where date_index >= first_date_index
),

priced as (
  select
    h.*,
    case
      when h.is_cash then substr(h.security_id, 6)
      else coalesce(a.currency, s.currency, settings.base_currency)
    end as currency,
    case when h.is_cash then 1.0::double else a.price_local end as price_local,
    case when h.is_cash then h.date else a.observed_on end as price_observed_on,
    case when h.is_cash then 0 else a.stale_days end as price_stale_days
  from held h
  cross join settings
  left join prices a on a.security_id = h.security_id and a.date = h.date
  left join clean_securities s on s.security_id = h.security_id
),

converted as (
  select
    p.*,
    f.rate as fx_rate,
    f.observed_on as fx_observed_on,
    f.stale_days as fx_stale_days,
    p.price_local * f.rate as price_base,
    p.quantity * (p.price_local * f.rate) as value_base
  from priced p
  left join rates f on f.currency = p.currency and f.date = p.date
),

with_status as (
  select
    portfolio_id,
    date,
    security_id,
    quantity,
    currency,
    is_cash,
    price_local,
    fx_rate,
    price_base,
    value_base,
    case
      when price_local is null then 'missing_price'
      when fx_rate is null then 'missing_fx'
      when price_stale_days > 0 or fx_stale_days > 0 then 'stale'
      else 'ok'
    end as price_status,
    price_observed_on,
    price_stale_days,
    fx_observed_on,
    fx_stale_days,
    snapshot_date,
    date_index
  from converted
)

select * from with_status;

create or replace view value_positions as
select * from value_positions_since(1);
