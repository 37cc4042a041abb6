create sequence breach_id_seq start 1;

-- One row per episode: opened when the metric reaches warning (or limit), closed on the
-- first date below clear. Retracted episodes (a correction undid them) stay, flagged.
create table limit_breaches (
  breach_id     integer primary key default nextval('breach_id_seq'),
  portfolio_id  varchar not null,
  metric        varchar not null,
  window_days   integer not null,
  estimator     varchar not null,
  limit_value   double not null,
  warning_value double not null,
  clear_value   double not null,
  level         varchar not null,          -- warning | breach
  opened_on     date not null,
  escalated_on  date,
  closed_on     date,                      -- null while open
  peak_value    double not null,
  peak_on       date not null,
  retracted     boolean not null default false,
  run_id        integer not null
);

-- The outbox: written in the same transaction as the results that caused it, then
-- delivered to every channel; delivered_at stays null until all channels took it.
create table alerts (
  alert_id        varchar primary key,     -- stable, for de-duplication by receivers
  created_at      timestamptz not null default now(),
  kind            varchar not null,        -- limit_opened | limit_escalated | limit_closed | limit_retracted | data_missing
  portfolio_id    varchar,
  as_of           date,                    -- valuation date the alert is about
  payload         json not null,
  delivered_at    timestamptz,
  attempts        integer not null default 0,
  last_error      varchar,
  next_attempt_at timestamptz,
  breach_id       integer,
  run_id          integer
);
