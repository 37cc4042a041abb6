-- The consecutive daily returns each risk_daily estimate needs before a security counts
-- as covered (every window, and the EWMA's seed), written from the config at every
-- start: check_data_quality flags a held security short of any of them (short_history).
alter table pipeline_settings add column history_days integer[];
