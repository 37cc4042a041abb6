-- Backs value_weights: each position's weight in its portfolio, value_base / portfolio
-- value_base (cash included, so a portfolio's weights sum to 1); null when the portfolio
-- value is unknown or zero. Stored, so a new day values its own dates only and a run
-- reads the weights of earlier dates as rows (valuing ~250 dates of every position twice
-- per new day was the largest part of its read).
-- Refilled from the date in the variable derived_from (src/storage/derived.ts sets it;
-- '-infinity' rebuilds all): the values of a date depend only on that date's positions,
-- carried prices and rates, which the earlier steps refill from the same date. The
-- values apply base_currency, max_stale_days and the securities' currencies: the
-- refresh's fingerprint carries them (a changed setting rebuilds in full, a changed
-- currency refills from the first date the security was held).
delete from derived_position_weights
where date >= getvariable('derived_from');

-- derived_from_index: the first valuation date refilled (set by step 070)
insert into derived_position_weights
with positions as (
  select portfolio_id, date, date_index, security_id, is_cash, currency, quantity, value_base, price_status
  from value_positions_since(getvariable('derived_from_index'))
),

-- the portfolio's value as value_portfolios has it (positions_value: unknown when any
-- position has no value), over the same rows as a window
with_total as (
  select
    p.*,
    positions_value(
      sum(p.value_base) over by_portfolio_date,
      count(*) over by_portfolio_date,
      count(p.value_base) over by_portfolio_date
    ) as portfolio_value_base
  from positions p
  window by_portfolio_date as (partition by p.portfolio_id, p.date, p.date_index)
),

weighted as (
  select
    portfolio_id,
    date,
    security_id,
    is_cash,
    value_base,
    case when portfolio_value_base <> 0 then value_base / portfolio_value_base end as weight,
    price_status,
    currency,
    quantity,
    portfolio_value_base,
    date_index
  from with_total
)

-- in date order: a reader of the last dates skips the row groups of the others
select * from weighted
order by date_index, portfolio_id, security_id;
