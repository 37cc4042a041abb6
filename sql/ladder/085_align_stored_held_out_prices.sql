-- Backs the carried prices (step 090): the suspect prices held out of risk
-- (checks.suspectPrices.mode hold, src/checks), open ones only. Refilled whole at every
-- refresh (a handful of rows): src/storage/derived.ts compares it with price_checks
-- first and refills the carried prices from the earliest date whose hold changed.
delete from derived_held_out_prices;

insert into derived_held_out_prices
select distinct security_id, date
from price_checks
where held and cleared_at is null;
