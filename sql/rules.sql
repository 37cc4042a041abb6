-- Rules the ladder, the checks and the risk inputs share, defined once here as macros.
-- Re-created before the ladder's views at every start (applyViews), so every step and
-- every query of the TypeScript side reads the same definition.

-- A cash balance is the security id CASH:<ISO 4217 code>: price 1 in its own currency.
create or replace macro is_cash(security_id) as starts_with(security_id, 'CASH:');

-- The currency of a cash balance; null for any other security.
create or replace macro cash_currency(security_id) as
  case when is_cash(security_id) then substr(security_id, 6) end;

-- A cash balance in the given currency.
create or replace macro is_cash_in(security_id, currency) as
  is_cash(security_id) and substr(security_id, 6) = currency;

-- A cash balance in the base currency: zero return, no market risk.
create or replace macro is_base_cash(security_id) as
  is_cash_in(security_id, (select base_currency from pipeline_settings));

-- The value of a set of positions (a portfolio, an exposure bucket) from the sum of their
-- values and how many there are and have one: unknown (null) when any position has no
-- value, never the sum of the valued part. Called with aggregates or with windows over
-- the same rows.
create or replace macro positions_value(value_sum, n_positions, n_valued) as
  case when n_valued = n_positions then value_sum end;
