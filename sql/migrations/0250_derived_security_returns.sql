-- Each held security's daily return per valuation date (step 170), stored so a run reads
-- its lookback's returns as rows instead of pairing ~500 dates of carried prices and
-- rates again on every run. It applies base_currency and max_stale_days like the
-- position values (the refresh's fingerprint carries them). Written only by
-- src/storage/derived.ts.
create table derived_security_returns (
  security_id      varchar not null,
  date             date not null,
  date_index       integer not null,
  log_return       double,
  log_return_local double,
  is_stale         boolean not null,
  simple_return    double,
  price_base       double,
  prev_price_base  double
);

-- the other derived tables were built without it: the next refresh rebuilds them all
delete from derived_state;
