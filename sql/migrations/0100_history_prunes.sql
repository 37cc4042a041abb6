-- One row per pruning of kept result history (config history.keepDays): which history
-- table, the cut-off (rows replaced before it were deleted), how many rows, by which run.
-- As-of queries for a time before a cut-off are incomplete; this table says since when.
create table history_prunes (
  pruned_at  timestamptz not null default now(),
  table_name varchar not null,             -- e.g. risk_daily_history
  cutoff     timestamptz not null,
  rows       bigint not null,
  run_id     integer not null
);
