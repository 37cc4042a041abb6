-- The loss stage's state between runs (src/loss/lossState.ts), so that a new day, or a
-- redo of the last date, neither replays nor reads the whole history. Each is continued
-- only under the settings it was made with, from the date before the run's first.

-- Each security's EWMA variance (the filtered historical simulation's sigma squared)
-- after each of the last max(risk.historical.days) + 1 valuation dates of the run that
-- stored it. One row: each run that computes a date replaces it.
create table loss_sigma_state (
  first_date   date not null,           -- valuation date of the first row of variances
  dates        integer not null,        -- rows of variances: consecutive valuation dates from first_date
  decay        double not null,         -- the EWMA's lambda and seeding
  seed_days    integer not null,
  settings     json not null,           -- the run's result settings
  security_ids varchar[] not null,      -- columns of variances
  variances    blob not null,           -- dates x securities doubles, row-major, little-endian; NaN: not in the EWMA
  run_id       integer not null
);

-- Each portfolio's worst 1-, 5- and 20-day windows of its own returns up to each of the
-- last two valuation dates of the run that stored them (stress_results' worst_* rows are
-- written at one date only, and only for a portfolio with a book).
create table loss_worst_state (
  portfolio_id varchar not null,
  as_of        date not null,           -- the windows end on or before it
  window_days  integer not null,
  start_date   date,                    -- first date whose return is in the window; null: no complete window
  window_return double,                 -- simple return over the window
  settings     json not null,
  run_id       integer not null
);
