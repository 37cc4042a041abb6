-- The `shrunk` estimator's Ledoit-Wolf intensity (the weight on the constant-correlation
-- target, 0..1) per row; null for the other estimators and for a shrunk row with fewer
-- than two holdings whose returns vary (nothing to shrink) or without a volatility.
alter table risk_daily add column shrinkage_intensity double;
