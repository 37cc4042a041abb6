-- Weight of each position in its portfolio: value_base / portfolio value_base (cash
-- included, so a portfolio's weights sum to 1). Null when the portfolio value is unknown
-- or zero.
create or replace view value_weights as
-- materialized: the positions are valued once and read twice (totals, then weights);
-- joining value_portfolios instead would value every position a second time, and a
-- window sum over 25M rows measured slower still
with positions as materialized (
  select portfolio_id, date, date_index, security_id, is_cash, currency, quantity, value_base, price_status
  from value_positions
),

-- the rule of value_portfolios: unknown when any position has no value
totals as (
  select
    portfolio_id,
    date,
    case when count(*) = count(value_base) then sum(value_base) end as portfolio_value_base
  from positions
  group by portfolio_id, date
),

weighted as (
  select
    p.portfolio_id,
    p.date,
    p.security_id,
    p.is_cash,
    p.value_base,
    case when t.portfolio_value_base <> 0 then p.value_base / t.portfolio_value_base end as weight,
    p.price_status,
    p.currency,
    p.quantity,
    t.portfolio_value_base,
    p.date_index
  from positions p
  join totals t on t.portfolio_id = p.portfolio_id and t.date = p.date
)

select * from weighted;
