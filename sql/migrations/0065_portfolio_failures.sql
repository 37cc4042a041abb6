-- Portfolios whose risk a finished run could not compute (an exception in the estimate,
-- an infinite figure): the run wrote the others and kept these portfolios' earlier
-- rows. One row per run and portfolio; the failure episode of a portfolio runs from its
-- first failed run to the next finished run that computes it (src/batch/portfolioIncident.ts).
create table portfolio_failures (
  run_id        integer not null,
  portfolio_id  varchar not null,
  failed_on     date,                   -- the valuation date of the first row that failed
  error         varchar not null,       -- one line
  primary key (run_id, portfolio_id)
);
