-- One row per recompute: what triggered it and which dates and portfolios it covered.
create sequence run_id_seq start 1;

create table risk_runs (
  run_id       integer primary key default nextval('run_id_seq'),
  trigger      varchar not null,       -- e.g. 'ingest:prices_20261130.csv', 'recompute', 'demo'
  from_date    date,                   -- null: full backfill
  portfolios   varchar[],              -- null: all portfolios
  started_at   timestamptz not null default now(),
  finished_at  timestamptz,
  status       varchar not null,       -- running | done | failed
  risk_rows    bigint,
  error        varchar
);

create table risk_daily (
  portfolio_id          varchar not null,
  date                  date not null,
  window_days           integer not null,  -- 0 for ewma
  estimator             varchar not null,  -- sample | ewma
  portfolio_value       double,            -- base currency
  vol_ex_ante           double,            -- annualized fraction
  vol_realized          double,            -- null for ewma
  ann_return            double,            -- null for ewma
  var_99_1d             double,            -- base currency
  es_975_1d             double,
  var_99_10d            double,
  es_975_10d            double,
  diversification_ratio double,
  coverage              double,            -- fraction of value with a full window of returns
  status                varchar not null,  -- ok | partial_history | stale_prices | insufficient_history | ...
  n_holdings            integer,
  run_id                integer not null
);

create table risk_contributions (
  portfolio_id varchar not null,
  date         date not null,
  window_days  integer not null,
  estimator    varchar not null,
  security_id  varchar not null,
  weight       double,
  mcr          double,
  ccr          double,
  pct          double,
  run_id       integer not null
);

create table security_stats (
  date        date not null,
  window_days integer not null,            -- 0 for ewma (ann_return null)
  security_id varchar not null,
  ann_return  double,
  ann_vol     double,
  run_id      integer not null
);
