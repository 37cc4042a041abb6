-- Fx rates as they stand now: the latest delivery per date and currency.
-- rate = units of base currency per one unit of currency.
create or replace view clean_fx as
with delivered as (
  select date, currency, rate, file_id, line
  from fx_rates
),

latest_delivery as (
  select *
  from delivered
  qualify row_number() over (partition by date, currency order by file_id desc, line desc) = 1
)

select * from latest_delivery;
