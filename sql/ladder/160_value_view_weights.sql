-- Weight of each position in its portfolio: value_base / portfolio value_base (cash
-- included, so a portfolio's weights sum to 1). Null when the portfolio value is unknown
-- or zero. The weights are stored (step 155, which says the rule).
-- value_weights_since(first_date_index): the same from that valuation date on.
create or replace macro value_weights_since(first_date_index) as table
select portfolio_id, date, security_id, is_cash, value_base, weight, price_status, currency, quantity, portfolio_value_base, date_index
from derived_position_weights
where date_index >= first_date_index;

create or replace view value_weights as
select * from value_weights_since(1);
