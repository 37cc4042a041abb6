-- The archive audit's memory: per archived delivery, the size, mtime and sha256 it saw
-- last (null size and sha256: the file was gone). A start re-hashes only files whose size
-- or mtime moved since (or never seen); the scheduled full audit re-hashes them all.
create table archive_audits (
  file_id      integer primary key,
  size         bigint,
  mtime_ms     double,
  sha256       varchar,
  checked_at   timestamptz not null default now()
);

-- A finding stays open until its file's bytes are back (restored), a delivery of the
-- same name or the same bytes arrives again (redelivered), or the config acknowledges it
-- (ingest.acknowledgedArchiveFiles); status shows open findings only.
alter table archive_findings add column resolved_at timestamptz;
alter table archive_findings add column resolution varchar;  -- restored | redelivered by file <id> | acknowledged
