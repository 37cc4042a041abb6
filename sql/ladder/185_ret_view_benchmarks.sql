-- Benchmark daily return from its weights, the rule of ret_portfolios with the benchmark's
-- weights in place of the portfolio's:
--   R_b,t = sum_i b_i,t-1 * (P_base_i,t / P_base_i,t-1 - 1) over the weights in force at t-1,
--   log_return = ln(1 + R_b,t).
-- Cash in the base currency earns 0; cash in another currency earns its fx return, as in
-- ret_portfolios. If any constituent at t-1 has no return the return is null.
-- ret_benchmarks_since(first_date_index): the returns from that valuation date on, read
-- from the weights of the date before it on.
create or replace macro ret_benchmarks_since(first_date_index) as table
with settings as (
  select base_currency
  from pipeline_settings
),

valuation_dates as (
  select date, date_index
  from align_valuation_dates
  where date_index >= first_date_index
),

weights_before as (
  select benchmark_id, date_index + 1 as date_index, security_id, weight
  from hold_benchmark_weights_since(first_date_index - 1)
),

security_returns as (
  select security_id, date_index, simple_return
  from ret_securities_since(first_date_index)
),

constituent_returns as (
  select
    w.benchmark_id,
    w.date_index,
    w.weight,
    case when is_cash_in(w.security_id, settings.base_currency) then 0.0::double else r.simple_return end as asset_return
  from weights_before w
  cross join settings
  left join security_returns r on r.security_id = w.security_id and r.date_index = w.date_index
),

summed as (
  select
    benchmark_id,
    date_index,
    sum(weight * asset_return) as weighted_return,
    (count(*) filter (where asset_return is null))::integer as n_uncovered,
    sum(weight) as weight_total
  from constituent_returns
  group by benchmark_id, date_index
),

dated as (
  select s.benchmark_id, v.date, s.date_index, s.weighted_return, s.n_uncovered, s.weight_total
  from summed s
  join valuation_dates v on v.date_index = s.date_index
),

returns as (
  select
    benchmark_id,
    date,
    case when n_uncovered = 0 then weighted_return end as simple_return,
    case when n_uncovered = 0 and weighted_return > -1 then ln(1 + weighted_return) end as log_return,
    n_uncovered,
    weight_total,
    date_index
  from dated
)

select * from returns;

create or replace view ret_benchmarks as
select * from ret_benchmarks_since(1);
