-- Prices as they stand now: for each date and security the row of the latest delivery
-- (highest file_id). A correction file supersedes; the earlier row stays in `prices`.
create or replace view clean_prices as
with delivered as (
  select date, security_id, price, currency, file_id, line
  from prices
),

latest_delivery as (
  select *
  from delivered
  qualify row_number() over (partition by date, security_id order by file_id desc, line desc) = 1
)

select * from latest_delivery;
