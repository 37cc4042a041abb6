-- How concentrated each portfolio is per valuation date, from its position weights (cash
-- included): largest_10_weight = the sum of the 10 largest |w_i| (a short counts by its
-- size, as a large short concentrates risk as much as a large long), and
-- effective_holdings = 1 / sum_i w_i^2, the inverse of the Herfindahl-Hirschman index on
-- weights (n for n equal weights, 1 for a single holding). Null when the portfolio's
-- weights are unknown (a position without a value, or a zero portfolio value).
create or replace view exposure_concentration as
with positions as (
  select portfolio_id, date, security_id, weight
  from value_weights
),

ranked as (
  select
    *,
    row_number() over (partition by portfolio_id, date order by abs(weight) desc, security_id) as size_rank
  from positions
),

per_portfolio as (
  select
    portfolio_id,
    date,
    count(*)::integer as n_positions,
    case when count(*) = count(weight) then sum(abs(weight)) filter (where size_rank <= 10) end as largest_10_weight,
    case when count(*) = count(weight) and sum(weight * weight) > 0 then 1 / sum(weight * weight) end as effective_holdings
  from ranked
  group by portfolio_id, date
)

select * from per_portfolio;
