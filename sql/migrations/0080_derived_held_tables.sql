-- Every security ever held (non-zero quantity in a snapshot in force, cash aside) or in a
-- benchmark, with the first snapshot date that holds it: the carried prices cover exactly
-- these, and a refresh from a date keeps the rows of those first held before it. Written
-- only by src/storage/derived.ts (sql/ladder/066_clean_stored_held_securities.sql).
create table derived_held_securities (
  security_id   varchar not null,
  first_held_on date not null
);

-- The suspect prices held out of risk when the carried prices were last refreshed (step
-- 085): a refresh compares it with price_checks to find the earliest date whose hold
-- changed. Written only by src/storage/derived.ts.
create table derived_held_out_prices (
  security_id varchar not null,
  date        date not null
);

-- the other derived tables were built without it: the next refresh rebuilds them all
delete from derived_state;
