-- One row per data problem, with a reason in plain words, so operations can see why a
-- value is missing or a risk figure rests on thin data. security_id is null for a
-- problem of the whole portfolio.
create or replace view check_data_quality as
with settings as (
  select base_currency, max_stale_days, history_days, positions_max_age_days
  from pipeline_settings
),

positions as (
  select
    portfolio_id, date, date_index, security_id, is_cash, currency,
    price_local, price_observed_on, price_stale_days, fx_rate, fx_observed_on, fx_stale_days
  from value_positions
),

-- Enough history, the rule of the risk rows' coverage: a security is covered by an
-- estimate needing h returns when its last h valuation dates all have one, i.e. its run
-- of consecutive returns is at least h. A security's returns start the day after its
-- first price, every later valuation date has a row, and the run restarts after a null.
return_runs as (
  select
    security_id,
    date_index,
    date_index - coalesce(
      max(date_index) filter (where log_return is null) over by_date,
      min(date_index) over by_date - 1
    ) as n_consecutive
  from ret_securities
  window by_date as (partition by security_id order by date_index rows between unbounded preceding and current row)
),

stale_past_limit as (
  select
    p.portfolio_id, p.date, p.security_id, 'stale_past_limit' as problem,
    format('price last observed on {} is {} valuation dates old, past the limit of {}: the position has no value',
      p.price_observed_on, p.price_stale_days, settings.max_stale_days) as reason
  from positions p
  cross join settings
  where not p.is_cash and p.price_local is null and p.price_observed_on is not null
),

stale_price as (
  select
    p.portfolio_id, p.date, p.security_id, 'stale_price' as problem,
    format('price carried from {}, {} of at most {} valuation dates',
      p.price_observed_on, p.price_stale_days, settings.max_stale_days) as reason
  from positions p
  cross join settings
  where not p.is_cash and p.price_local is not null and p.price_stale_days > 0
),

no_price as (
  select
    p.portfolio_id, p.date, p.security_id, 'no_price' as problem,
    format('{} is held but has no price on or before this date', p.security_id) as reason
  from positions p
  where not p.is_cash and p.price_observed_on is null
),

stale_fx as (
  select
    p.portfolio_id, p.date, p.security_id, 'stale_fx' as problem,
    format('{} rate carried from {}, {} of at most {} valuation dates',
      p.currency, p.fx_observed_on, p.fx_stale_days, settings.max_stale_days) as reason
  from positions p
  cross join settings
  where p.fx_rate is not null and p.fx_stale_days > 0
),

missing_fx as (
  select
    p.portfolio_id, p.date, p.security_id, 'missing_fx' as problem,
    case
      when p.fx_observed_on is null then
        format('no {} rate on or before this date: the position has no value in {}', p.currency, settings.base_currency)
      else
        format('{} rate last observed on {} is {} valuation dates old, past the limit of {}: the position has no value in {}',
          p.currency, p.fx_observed_on, p.fx_stale_days, settings.max_stale_days, settings.base_currency)
    end as reason
  from positions p
  cross join settings
  where p.fx_rate is null
),

-- the needs each held security falls short of; base-currency cash never needs a return,
-- cash in another currency needs its fx returns
history_short_of as (
  select
    p.portfolio_id, p.date, p.security_id, coalesce(r.n_consecutive, 0) as n_consecutive,
    list_filter(settings.history_days, h -> h > coalesce(r.n_consecutive, 0)) as short_of
  from positions p
  cross join settings
  left join return_runs r on r.security_id = p.security_id and r.date_index = p.date_index
  where not is_base_cash(p.security_id)
),

short_history as (
  select
    portfolio_id, date, security_id, 'short_history' as problem,
    format('{} consecutive daily returns, short of a full history of {} days', n_consecutive, array_to_string(short_of, ', ')) as reason
  from history_short_of
  where len(short_of) > 0
),

nonpositive_value as (
  select
    v.portfolio_id, v.date, null::varchar as security_id, 'nonpositive_value' as problem,
    format('portfolio value is {} {}: weights and returns have no meaning', v.value_base, settings.base_currency) as reason
  from value_portfolios v
  cross join settings
  where v.value_base <= 0
),

-- a price found suspect (src/checks), on its date, for every portfolio holding the security
suspect_price as (
  select
    p.portfolio_id, p.date, p.security_id, 'suspect_price' as problem,
    c.reason || case when c.held then '; held out of risk, the previous price carried forward' else '; used in risk' end as reason
  from positions p
  join price_checks c on c.security_id = p.security_id and c.date = p.date
  where c.cleared_at is null
),

-- a portfolio valued from a snapshot older than the limit: is the custodian still sending it?
-- (a closed portfolio, whose last snapshot holds nothing, has no rows here)
positions_stale as (
  select
    h.portfolio_id, h.date, null::varchar as security_id, 'positions_stale' as problem,
    format('holdings from the positions snapshot of {}, {} days before this date (more than {}): is the portfolio still delivered?',
      h.snapshot_date, h.date - h.snapshot_date, settings.positions_max_age_days) as reason
  from (select distinct portfolio_id, date, snapshot_date from hold_daily_positions) h
  cross join settings
  where h.date - h.snapshot_date > settings.positions_max_age_days
),

problems as (
  select * from stale_past_limit
  union all select * from stale_price
  union all select * from no_price
  union all select * from stale_fx
  union all select * from missing_fx
  union all select * from short_history
  union all select * from nonpositive_value
  union all select * from suspect_price
  union all select * from positions_stale
)

select * from problems;
