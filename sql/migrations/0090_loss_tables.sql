-- Loss estimates beyond the normal model (SPEC section 9): VaR and ES by method, the
-- backtest of each method's 1-day 99% VaR, and stress scenarios. Written by src/loss/
-- in the run's write transaction, replacing the run's scope like risk_daily.
create table var_daily (
  portfolio_id varchar not null,
  date         date not null,
  method       varchar not null,   -- normal | historical | filtered_historical
  window_days  integer not null,   -- normal: covariance window (0 for ewma); else scenarios N
  estimator    varchar,            -- normal: sample | ewma; else null
  var_99_1d    double,             -- base currency, positive = loss
  es_975_1d    double,
  coverage     double,             -- share of gross value with a return in every scenario
  status       varchar not null,   -- ok | partial_history | insufficient_history | unpriced | value_not_positive
  missing      varchar[],          -- holdings left out (no return in some scenario)
  run_id       integer not null
);

create table var_backtest (
  portfolio_id   varchar not null,
  date           date not null,    -- the day whose P&L is tested
  method         varchar not null,
  window_days    integer not null,
  estimator      varchar,
  var_99_1d      double not null,  -- predicted at the previous valuation date's close
  pnl            double not null,  -- previous value x simple holdings return
  exception      boolean not null, -- loss > VaR
  tested_days    integer not null, -- tested days in the window (at most 250)
  exceptions_250 integer not null,
  kupiec_lr      double not null,
  kupiec_p       double not null,
  christoffersen_lr double,
  christoffersen_p  double,
  zone           varchar,          -- green | yellow | red; null before 250 tested days
  run_id         integer not null
);

create table stress_results (
  portfolio_id varchar not null,
  date         date not null,      -- the holdings revalued: this date's close
  scenario_id  varchar not null,
  kind         varchar not null,   -- historical | hypothetical
  pnl_base     double,             -- null when nothing could be revalued
  pnl_pct      double,             -- of portfolio value
  coverage     double,             -- share of gross value with data over the scenario
  missing      varchar[],          -- holdings without data over the range (left out, never "unchanged")
  range_from   date,               -- historical: the move's first and last date
  range_to     date,
  run_id       integer not null
);
