-- What operations were last told about each limit episode: the state described by the
-- latest alert raised for it. After every run the limit check compares it with the
-- episode's current state and raises one limit_state alert when they differ, so a
-- catch-up or a correction can never leave operations with an outdated picture.
create table limit_told_state (
  breach_id     integer primary key,
  episode_state varchar not null,          -- open | closed
  level         varchar not null,          -- warning | breach | closed | retracted
  opened_on     date not null,
  alert_id      varchar not null,          -- the alert that told it
  state_alerts  integer not null default 0 -- limit_state alerts raised so far: numbers the next one's id
);

-- Episodes alerted before this table existed: their latest alert is what was told.
insert into limit_told_state (breach_id, episode_state, level, opened_on, alert_id)
select breach_id,
       case when kind in ('limit_closed', 'limit_retracted') then 'closed' else 'open' end,
       case kind when 'limit_closed' then 'closed' when 'limit_retracted' then 'retracted' else payload->>'level' end,
       (payload->>'opened_on')::date,
       alert_id
from alerts
where breach_id is not null
qualify row_number() over (partition by breach_id order by created_at desc, alert_id desc) = 1;

-- Suspect prices found by src/checks (one open row per security and date at most). A
-- row is never deleted: when a later delivery repeats or corrects the price, or a recheck
-- no longer finds it suspect, the row is cleared. `held`: left out of risk (mode hold),
-- the previous price carried forward as stale.
create sequence price_check_id_seq start 1;
create table price_checks (
  check_id       integer primary key default nextval('price_check_id_seq'),
  security_id    varchar not null,
  date           date not null,
  price          double not null,        -- the delivered price found suspect
  rules          varchar not null,       -- jump | power_of_ten | unchanged, comma-joined
  reason         varchar not null,
  held           boolean not null,
  flagged_at     timestamptz not null default now(),
  cleared_at     timestamptz,
  cleared_reason varchar
);

-- Data problems alerted as open (portfolio_unvalued): one row while the problem lasts; the
-- run that finds it gone raises the closing alert and removes the row.
create table data_alert_state (
  problem_key     varchar primary key,     -- kind|portfolio_id
  kind            varchar not null,
  portfolio_id    varchar,
  since           date not null,
  opened_alert_id varchar not null
);
