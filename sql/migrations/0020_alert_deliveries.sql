-- Which channel has taken which alert: a retry after a failure or a crash repeats only
-- the channels that did not, so the alerts file does not get a second line.
create table alert_deliveries (
  alert_id     varchar not null,
  channel      varchar not null,         -- log | file | webhook
  delivered_at timestamptz not null,
  primary key (alert_id, channel)
);
