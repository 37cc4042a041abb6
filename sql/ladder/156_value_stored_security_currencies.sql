-- The securities' currencies as the stored values (step 155) applied them: the next
-- refresh compares clean_securities with them (src/storage/derived.ts) to find the first
-- date whose values a changed currency moves. Small (one row per security): always
-- written whole.
delete from derived_security_currencies;

insert into derived_security_currencies
select security_id, currency
from clean_securities;
