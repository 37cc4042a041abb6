-- Portfolio market value per valuation date (cash included). When a position has no
-- value the portfolio's value is unknown (positions_value, sql/rules.sql): value_base is
-- null, value_base_priced keeps the sum of the positions that have one, n_unpriced says
-- how many lack it.
create or replace view value_portfolios as
with positions as (
  select portfolio_id, date, date_index, value_base, price_status
  from value_positions
),

totals as (
  select
    portfolio_id,
    date,
    positions_value(sum(value_base), count(*), count(value_base)) as value_base,
    sum(value_base) as value_base_priced,
    count(*)::integer as n_positions,
    (count(*) - count(value_base))::integer as n_unpriced,
    (count(*) filter (where price_status = 'stale'))::integer as n_stale,
    date_index
  from positions
  group by portfolio_id, date, date_index
)

select * from totals;
