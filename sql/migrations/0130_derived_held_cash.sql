-- Every cash balance (CASH:<code>) ever held (non-zero quantity in a snapshot in force) or
-- in a benchmark, with the first snapshot date that holds it: the security returns read
-- the fx returns of the foreign ones from here instead of scanning the whole position
-- history on every run. Written only by src/storage/derived.ts
-- (sql/ladder/067_clean_stored_held_cash.sql).
create table derived_held_cash (
  security_id   varchar not null,
  first_held_on date not null
);

-- the other derived tables were built without it: the next refresh rebuilds them all
delete from derived_state;
