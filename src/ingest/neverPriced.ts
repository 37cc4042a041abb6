import type { Database } from '../storage/database.ts';

/**
 * The securities a positions file holds (quantity not zero, cash aside) for which no
 * price has ever been delivered: the file is well-formed and loaded, but its portfolios
 * will have no value until a price arrives, so the ingest line and the log say so.
 */
export async function neverPricedSecurities(db: Database, fileId: number): Promise<string[]> {
  const rows = await db.all<{ security_id: string }>(
    `select distinct security_id from positions
     where file_id = $1 and quantity <> 0 and not is_cash(security_id)
       -- distinct first: the lookup is built over the securities ever priced, not over every price row
       and security_id not in (select distinct security_id from prices)
     order by security_id`,
    [fileId],
  );
  return rows.map((r) => r.security_id);
}
