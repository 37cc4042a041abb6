-- Daily log return of each ever-held security between consecutive valuation dates, as
-- step 170 stores it (the rule and its columns are there).
-- ret_securities_since(first_date_index): the returns from that valuation date on.
create or replace macro ret_securities_since(first_date_index) as table
select security_id, date, date_index, log_return, log_return_local, is_stale, simple_return, price_base, prev_price_base
from derived_security_returns
where date_index >= first_date_index;

create or replace view ret_securities as
select * from ret_securities_since(1);
