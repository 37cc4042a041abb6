-- Deliveries left in the inbox on purpose: not yet complete (last line unterminated, no
-- done-marker, a compressed stream cut short) or suspect (a positions snapshot that drops
-- most of a portfolio's holdings). One row per name and bytes held; released_at is set
-- when a delivery of that name is finally ingested or rejected.
create table held_files (
  name         varchar not null,
  sha256       varchar not null,
  code         varchar not null,       -- unterminated_line | no_done_marker | truncated_stream | empty_so_far | snapshot_drop
  reason       varchar not null,       -- one line for operations
  file_mtime   double not null,        -- ms; a re-delivery of the same bytes changes it
  held_at      timestamptz not null default now(),
  released_at  timestamptz,
  primary key (name, sha256)
);

-- Archived deliveries whose bytes no longer match the sha256 recorded when they were
-- ingested (or that vanished): written by the audit at start, one row per finding.
create table archive_findings (
  file_id      integer not null,
  archived_path varchar not null,
  finding      varchar not null,       -- changed | missing
  found_at     timestamptz not null default now()
);
