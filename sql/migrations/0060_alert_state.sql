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
