-- How old a portfolio's positions snapshot may be, in calendar days, before
-- check_data_quality lists it (positions_stale): written from the config at every start.
alter table pipeline_settings add column positions_max_age_days integer;
