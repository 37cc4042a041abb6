-- Backs ret_portfolios. Portfolio daily return from holdings, not from value changes
-- (deposits, withdrawals and trades move the value but are no return):
--   R_t = sum_i w_i,t-1 * (P_base_i,t / P_base_i,t-1 - 1) over the positions at t-1,
--   log_return = ln(1 + R_t).
-- Cash in the base currency earns 0 but keeps its weight; cash in another currency earns
-- its fx return (a row of ret_securities). If any position at t-1 has no return (or no weight)
-- R_t would rest on made-up data, so it is null; covered_weight shows how much was known.
-- Refilled from the date in the variable derived_from (src/storage/derived.ts sets it;
-- '-infinity' rebuilds all): a return at t reads the weights of t-1 (step 155, refilled
-- from the same date) and the prices and rates of t-1 and t, so those before it stand.
-- Like the weights it applies the valuation's settings, which the refresh's fingerprint
-- carries.
delete from derived_portfolio_returns
where date >= getvariable('derived_from');

-- derived_from_index: the first valuation date refilled (set by step 070)
insert into derived_portfolio_returns
with settings as (
  select base_currency
  from pipeline_settings
),

valuation_dates as (
  select date, date_index
  from align_valuation_dates
  where date_index >= getvariable('derived_from_index')
),

-- positions at the close of t-1, keyed by the date t they earn their return on
positions_before as (
  select portfolio_id, date_index + 1 as date_index, security_id, is_cash, weight
  from value_weights_since(getvariable('derived_from_index') - 1)
),

security_returns as (
  select security_id, date_index, simple_return
  from ret_securities_since(getvariable('derived_from_index'))
),

position_returns as (
  select
    p.portfolio_id,
    p.date_index,
    p.weight,
    case when is_cash_in(p.security_id, settings.base_currency) then 0.0::double else r.simple_return end as asset_return
  from positions_before p
  cross join settings
  left join security_returns r on r.security_id = p.security_id and r.date_index = p.date_index
),

summed as (
  select
    portfolio_id,
    date_index,
    sum(weight * asset_return) as weighted_return,
    sum(weight) filter (where asset_return is not null) as covered_weight,
    (count(*) filter (where asset_return is null or weight is null))::integer as n_uncovered,
    count(*)::integer as n_positions_before
  from position_returns
  group by portfolio_id, date_index
),

-- the last valuation date's positions have no next date yet: the join drops them
dated as (
  select s.portfolio_id, v.date, s.date_index, s.weighted_return, s.covered_weight, s.n_uncovered, s.n_positions_before
  from summed s
  join valuation_dates v on v.date_index = s.date_index
),

complete_only as (
  select *, case when n_uncovered = 0 then weighted_return end as simple_return
  from dated
),

returns as (
  select
    portfolio_id,
    date,
    simple_return,
    case when simple_return > -1 then ln(1 + simple_return) end as log_return,
    covered_weight,
    n_uncovered,
    n_positions_before,
    date_index
  from complete_only
)

-- in date order: a reader of the last dates skips the row groups of the others
select * from returns
order by date_index, portfolio_id;
