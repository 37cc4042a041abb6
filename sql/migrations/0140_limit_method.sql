-- A backtest_zone limit watches one VaR method's backtest (var_backtest.method); the
-- historical methods have no covariance estimator, so their episodes carry none, as in
-- var_backtest. Episodes recorded before watched the normal VaR only.
alter table limit_breaches add column method varchar;
update limit_breaches set method = 'normal' where metric = 'backtest_zone';
alter table limit_breaches alter column estimator drop not null;
