-- The EWMA covariance at the last date a run computed, so that the next day costs one
-- update instead of a replay of the whole history. One row: each run replaces it.
create table risk_ewma_state (
  as_of        date not null,           -- valuation date the matrix is at (after its update)
  decay        double not null,         -- decay and seeding it was computed with; a change forces a replay
  seed_days    integer not null,
  security_ids varchar[] not null,      -- securities in the matrix, in matrix order
  matrix       blob not null,           -- k x k doubles, row-major, little-endian; k = len(security_ids)
  run_id       integer not null
);

-- How many holdings entered the covariance (a full history under the row's estimator).
alter table risk_daily add column n_covered integer;
