-- Benchmark weights as delivered: a full snapshot of a benchmark's constituents on a
-- date, holding until the benchmark's next snapshot (like positions). Superseded rows stay.
create table benchmarks (
  file_id      integer not null,
  line         bigint not null,
  date         date not null,
  benchmark_id varchar not null,
  security_id  varchar not null,
  weight       double not null           -- fraction of the benchmark (0.05 = 5%)
);

-- Risk relative to the benchmark config `benchmarks` maps a portfolio to; null without one.
alter table risk_daily add column benchmark_id varchar;
alter table risk_daily add column tracking_error_ex_ante double;   -- sqrt(A (w - b)' S (w - b))
alter table risk_daily add column tracking_error_realized double;  -- sqrt(A) x sample std of r_p - r_b; null for ewma
alter table risk_daily add column beta_to_benchmark double;        -- w'Sb / b'Sb

-- Euler contributions to the ex-ante tracking error, on the active weights a = w - b:
-- one row per security held or in the benchmark; the ccr add up to tracking_error_ex_ante.
-- Kept for the same dates as risk_contributions (risk.contributions).
create table risk_active_contributions (
  portfolio_id     varchar not null,
  date             date not null,
  window_days      integer not null,
  estimator        varchar not null,
  benchmark_id     varchar not null,
  security_id      varchar not null,
  weight           double,              -- in the portfolio (0 when only in the benchmark)
  benchmark_weight double,              -- in the benchmark (0 when only in the portfolio)
  active_weight    double,              -- weight - benchmark_weight
  mcr              double,              -- A (S a)_i / TE
  ccr              double,              -- active_weight x mcr
  pct              double,              -- ccr / TE
  run_id           integer not null
);
