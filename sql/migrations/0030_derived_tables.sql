-- Shared layers of the views, stored instead of recomputed by every view that reads them
-- (DuckDB shares no work between view references). Written only by src/storage/derived.ts
-- from the raw tables (the stored steps of sql/ladder/); they hold no setting, so a
-- changed config needs no rebuild: the views apply max_stale_days and base_currency when read.
create table derived_snapshots (
  portfolio_id  varchar not null,
  snapshot_date date not null,
  file_id       integer not null,
  held_until    date                 -- the portfolio's next snapshot date; null while latest
);

create table derived_valuation_dates (
  date       date not null,
  date_index integer not null
);

-- every ever-held security on every valuation date from its first price on, with the last
-- price on or before the date however old (the views null it past max_stale_days)
create table derived_aligned_prices (
  security_id    varchar not null,
  date           date not null,
  date_index     integer not null,
  price          double not null,
  price_currency varchar,             -- as delivered; null = the security's or base currency
  observed_on    date not null,
  stale_days     integer not null      -- valuation dates since the price was observed
);

-- every delivered currency (the base too; the views drop it) carried the same way
create table derived_aligned_fx (
  currency    varchar not null,
  date        date not null,
  date_index  integer not null,
  rate        double not null,
  observed_on date not null,
  stale_days  integer not null
);

-- what the derived tables reflect: a fingerprint of the raw tables they were built from
-- (rows and highest file_id of each), so an outside change or a crash is caught
create table derived_state (
  raw_fingerprint varchar not null,
  refreshed_at    timestamptz not null default now()
);
