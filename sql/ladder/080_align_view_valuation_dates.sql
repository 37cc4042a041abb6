-- Valuation dates: the dates on which at least one held security has a price, numbered
-- by date_index 1, 2, 3, ... Stored by step 070 (src/storage/derived.ts fills it): every
-- later view reads the calendar, often several times, and deriving it from all positions
-- each time cost seconds per reference.
create or replace view align_valuation_dates as
with stored as (
  select date, date_index
  from derived_valuation_dates
)

select * from stored;
