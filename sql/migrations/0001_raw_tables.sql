-- Every file received, whatever became of it. file_id orders deliveries: a later file
-- supersedes an earlier one for the same key.
create sequence file_id_seq start 1;

create table ingested_files (
  file_id       integer primary key default nextval('file_id_seq'),
  name          varchar not null,      -- file name as delivered
  sha256        varchar not null,
  kind          varchar,               -- prices | positions | fx | securities (null if unknown)
  source        varchar,               -- config source name that matched
  rows          bigint not null default 0,
  status        varchar not null,      -- ingested | duplicate | rejected
  error         varchar,               -- one line: file, row, column, value, expected
  received_at   timestamptz not null default now(),
  archived_path varchar,               -- where the file now lives (archive/ or quarantine/)
  min_date      date,                  -- first date the file touches (drives incremental recompute)
  max_date      date,
  duplicate_of  integer                -- for status duplicate: the file_id first delivering these bytes
);

-- Raw rows exactly as received (canonical column names), with their file of origin.
-- Superseded rows stay; the clean_* views pick the latest delivery per key.
create table prices (
  file_id     integer not null,
  line        bigint not null,         -- 1-based data row in its file
  date        date not null,
  security_id varchar not null,
  price       double not null,
  currency    varchar
);

create table positions (
  file_id      integer not null,
  line         bigint not null,
  date         date not null,
  portfolio_id varchar not null,
  security_id  varchar not null,
  quantity     double not null
);

create table fx_rates (
  file_id  integer not null,
  line     bigint not null,
  date     date not null,
  currency varchar not null,
  rate     double not null             -- units of base currency per one unit of currency
);

create table securities (
  file_id     integer not null,
  line        bigint not null,
  security_id varchar not null,
  name        varchar,
  asset_class varchar,
  currency    varchar
);

-- Settings the views need, written from the config at every start (one row), so an
-- outside SQL client sees the same views the worker computes with.
create table pipeline_settings (
  base_currency          varchar not null,
  max_stale_days         integer not null,
  trading_days_per_year  integer not null,
  windows                integer[] not null   -- rolling windows, for the history-too-short check
);
