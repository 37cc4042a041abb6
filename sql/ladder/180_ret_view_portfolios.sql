-- Portfolio daily return from holdings, R_t = sum_i w_i,t-1 * (P_base_i,t / P_base_i,t-1 - 1),
-- and ln(1 + R_t); null when a position at t-1 has no return. The returns are stored
-- (step 175, which says the rule).
-- ret_portfolios_since(first_date_index): the returns from that valuation date on.
create or replace macro ret_portfolios_since(first_date_index) as table
select portfolio_id, date, simple_return, log_return, covered_weight, n_uncovered, n_positions_before, date_index
from derived_portfolio_returns
where date_index >= first_date_index;

create or replace view ret_portfolios as
select * from ret_portfolios_since(1);
