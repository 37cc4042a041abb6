-- The settings that shaped a run's results (windows, stale-price carry, EWMA decay and
-- seeding, weights, coverage, annualisation, base currency, ...), as a JSON object keyed
-- by config path. A batch compares them with the current config: a change widens the
-- run to a full recompute, so stored rows never mix two settings. Null: recorded before
-- this column existed (treated as unknown, so the next batch recomputes in full).
alter table risk_runs add column settings json;
-- The same object with the stored EWMA matrices: a state is continued only under the settings it was made with.
alter table risk_ewma_state add column settings json;
