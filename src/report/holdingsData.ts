import type { Database } from '../storage/database.ts';

/** One position held on the report's date, as the valuation views hold it. */
export interface Holding {
  security_id: string;
  name: string | null;
  /** 'cash' for a cash balance, 'unclassified' when the securities file gives none (as exposure_daily labels them). */
  asset_class: string;
  currency: string;
  quantity: number;
  price_local: number | null;
  value_base: number | null;
  weight: number | null;
  /** ok, stale, missing_price or missing_fx (value_positions' price_status). */
  price_status: string;
}

/**
 * Every position of the portfolio on asOf, cash included, largest weight first; a position
 * without a value stays in the list (null value and weight, last) with the reason.
 */
export async function loadHoldings(db: Database, portfolioId: string, asOf: string): Promise<Holding[]> {
  return db.all<Holding>(
    `select w.security_id, s.name,
       case when w.is_cash then 'cash' else coalesce(nullif(trim(s.asset_class), ''), 'unclassified') end as asset_class,
       w.currency, w.quantity, p.price_local, w.value_base, w.weight, w.price_status
     from value_weights w
     join value_positions p using (portfolio_id, date, security_id)
     left join clean_securities s on s.security_id = w.security_id
     where w.portfolio_id = $1 and w.date = $2
     order by w.weight desc nulls last, w.value_base desc nulls last, w.security_id`,
    [portfolioId, asOf],
  );
}
