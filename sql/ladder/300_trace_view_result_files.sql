-- Lineage: for each risk_daily row, the delivered files whose rows entered its window,
-- one row per (result row, kind, file): the positions snapshots in force on the window's
-- dates, the price rows carried onto those dates for every security held on any of them,
-- and the fx rows carried onto them for those securities' (and cash's) currencies.
-- A window of W returns reads the prices of W + 1 valuation dates; the ewma row
-- (window_days 0) reads every date from the first. Filter by portfolio_id and date.
create or replace view trace_result_files as
with results as (
  select r.portfolio_id, r.date, r.window_days, r.estimator, v.date_index
  from risk_daily r
  join align_valuation_dates v on v.date = r.date
),

windows as (
  select
    portfolio_id,
    date,
    window_days,
    estimator,
    case when window_days = 0 then 1 else greatest(date_index - window_days, 1) end as first_index,
    date_index as last_index
  from results
),

held_in_window as (
  select w.*, p.security_id, p.is_cash, p.currency, p.snapshot_date
  from windows w
  join value_positions p
    on p.portfolio_id = w.portfolio_id and p.date_index between w.first_index and w.last_index
),

snapshot_files as (
  select distinct h.portfolio_id, h.date, h.window_days, h.estimator, 'positions' as kind, s.file_id
  from held_in_window h
  join clean_snapshots s on s.portfolio_id = h.portfolio_id and s.snapshot_date = h.snapshot_date
),

-- a security's returns over the whole window enter the covariance, held there or not
price_files as (
  select distinct h.portfolio_id, h.date, h.window_days, h.estimator, 'prices' as kind, c.file_id
  from (select distinct portfolio_id, date, window_days, estimator, first_index, last_index, security_id
        from held_in_window where not is_cash) h
  join align_prices a on a.security_id = h.security_id and a.date_index between h.first_index and h.last_index
  join clean_prices c on c.security_id = a.security_id and c.date = a.observed_on
),

-- the base currency has no fx rows, so it joins none
fx_files as (
  select distinct h.portfolio_id, h.date, h.window_days, h.estimator, 'fx' as kind, c.file_id
  from (select distinct portfolio_id, date, window_days, estimator, first_index, last_index, currency
        from held_in_window) h
  join align_fx a on a.currency = h.currency and a.date_index between h.first_index and h.last_index
  join clean_fx c on c.currency = a.currency and c.date = a.observed_on
),

all_files as (
  select * from snapshot_files
  union all
  select * from price_files
  union all
  select * from fx_files
)

select * from all_files;
