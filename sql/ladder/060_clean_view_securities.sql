-- Reference data as it stands now: the latest delivery per security.
create or replace view clean_securities as
with delivered as (
  select security_id, name, asset_class, currency, file_id, line
  from securities
),

latest_delivery as (
  select *
  from delivered
  qualify row_number() over (partition by security_id order by file_id desc, line desc) = 1
)

select * from latest_delivery;
