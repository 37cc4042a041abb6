-- The securities the suspect-price check looks at: every security (cash aside) with a
-- non-zero quantity in any delivered positions row or a non-zero weight in any delivered
-- benchmarks row, superseded snapshots included. Kept by src/checks/checkedSecurities.ts
-- from the rows added since `raw_marks` (the two tables' marks, src/storage/rawAppends.ts),
-- so a new day's check reads that day's rows instead of the whole position history.
create table price_check_securities (
  security_id varchar not null
);

create table price_check_securities_state (
  raw_marks varchar not null            -- 'positions mark|benchmarks mark' the list reflects
);
