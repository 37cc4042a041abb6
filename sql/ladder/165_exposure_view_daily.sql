-- What each portfolio is exposed to per valuation date: its value and weight by asset
-- class and by currency (the currency a holding is valued in, cash by its own). The
-- asset class comes from the securities reference data; a security without one shows
-- as 'unclassified' (never dropped, so each dimension's weights still sum to 1), cash
-- balances as 'cash'. A bucket holding a position without a value has a null value and
-- weight, as value_portfolios leaves the whole portfolio's value unknown then.
create or replace view exposure_daily as
with positions as (
  select portfolio_id, date, security_id, is_cash, currency, value_base, weight
  from value_weights
),

reference as (
  select security_id, nullif(trim(asset_class), '') as asset_class
  from clean_securities
),

classified as (
  select
    p.*,
    case when p.is_cash then 'cash' else coalesce(r.asset_class, 'unclassified') end as asset_class
  from positions p
  left join reference r on r.security_id = p.security_id
),

by_dimension as (
  select portfolio_id, date, 'asset_class' as dimension, asset_class as bucket, value_base, weight
  from classified
  union all
  select portfolio_id, date, 'currency' as dimension, currency as bucket, value_base, weight
  from classified
),

buckets as (
  select
    portfolio_id,
    date,
    dimension,
    bucket,
    positions_value(sum(value_base), count(*), count(value_base)) as value_base,
    positions_value(sum(weight), count(*), count(weight)) as weight,
    count(*)::integer as n_positions
  from by_dimension
  group by portfolio_id, date, dimension, bucket
)

select * from buckets;
