-- Why vol_ex_ante moved since the previous valuation date, per portfolio, date and
-- estimate: from_weights + from_market = vol_now - vol_prev, the symmetric split
-- 0.5[(s(w1,S0) - s(w0,S0)) + (s(w1,S1) - s(w0,S1))] for the weights, the rest the
-- market. Both books over the non-cash holdings covered on both dates: status ok when
-- that is all of them (vol_prev and vol_now are then the risk_daily figures),
-- partial_history when some are left out, history_broken (no figures) when a security
-- of the pair lost its history on the date.
create table vol_change (
  portfolio_id                 varchar not null,
  date                         date not null,
  window_days                  integer not null,  -- 0 for ewma
  estimator                    varchar not null,
  prev_date                    date not null,
  vol_prev                     double,            -- annualized fraction
  vol_now                      double,
  from_weights                 double,            -- trades and drift
  from_market                  double,            -- the covariance
  status                       varchar not null,
  weights_driver_security_id   varchar,           -- the security with the largest weights part, by size
  weights_driver_change        double,            -- its part of from_weights
  run_id                       integer not null
);

-- The weights part per security (adds up to vol_change.from_weights): its weight change
-- times its marginal risk at the midpoint of the two books, averaged over both
-- covariances. Kept for the dates risk_contributions keeps (risk.contributions).
create table vol_change_securities (
  portfolio_id  varchar not null,
  date          date not null,
  window_days   integer not null,
  estimator     varchar not null,
  security_id   varchar not null,
  weight_prev   double,
  weight_now    double,
  from_weights  double,
  run_id        integer not null
);
