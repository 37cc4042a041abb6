-- derived_held_securities now lists cash balances too (step 066): the security returns
-- read the foreign ones from it instead of scanning the whole position history on every
-- run, and the carried prices (step 090) leave them aside. The table of migration 0130
-- that held them apart goes; the rows were derived without cash: the next refresh
-- rebuilds every derived table.
drop table if exists derived_held_cash;
delete from derived_state;
