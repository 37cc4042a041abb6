-- Each position's value and weight per valuation date (step 155), stored so a new day
-- values its own dates only and a run reads the others as rows. Unlike the earlier derived
-- tables it depends on settings (base_currency, max_stale_days) and the securities'
-- currencies: the refresh's fingerprint carries them (a changed setting rebuilds it in
-- full, a changed currency refills it from the security's first holding).
-- Written only by src/storage/derived.ts.
create table derived_position_weights (
  portfolio_id         varchar not null,
  date                 date not null,
  security_id          varchar not null,
  is_cash              boolean not null,
  value_base           double,
  weight               double,
  price_status         varchar not null,
  currency             varchar,
  quantity             double not null,
  portfolio_value_base double,
  date_index           integer not null
);

-- Each portfolio's holdings-based return per valuation date (step 175), from the stored
-- weights, with the same settings. Written only by src/storage/derived.ts.
create table derived_portfolio_returns (
  portfolio_id       varchar not null,
  date               date not null,
  simple_return      double,
  log_return         double,
  covered_weight     double,
  n_uncovered        integer not null,
  n_positions_before integer not null,
  date_index         integer not null
);

-- The securities' currencies the stored values were computed with (step 156): a refresh
-- compares them with clean_securities and refills from the first date a security whose
-- currency changed was held. Written only by src/storage/derived.ts.
create table derived_security_currencies (
  security_id varchar not null,
  currency    varchar
);

-- the other derived tables were built without it: the next refresh rebuilds them all
delete from derived_state;
