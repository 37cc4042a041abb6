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

/**
 * Dates from `from` to `to` on which a new positions snapshot of the portfolio holds other
 * securities or quantities than the one before it (a resent, unchanged snapshot is no rebalance).
 */
export async function loadRebalances(db: Database, portfolioId: string, from: string, to: string): Promise<string[]> {
  const rows = await db.all<{ date: string }>(
    `with snapshot_holdings as (
       select s.snapshot_date,
         list((p.security_id, p.quantity) order by p.security_id) filter (where p.quantity <> 0) as holdings
       from clean_snapshots s
       left join clean_positions p on p.portfolio_id = s.portfolio_id and p.date = s.snapshot_date
       where s.portfolio_id = $1
       group by s.snapshot_date
     ),
     compared as (
       select snapshot_date, holdings, lag(holdings) over (order by snapshot_date) as previous,
         row_number() over (order by snapshot_date) as n
       from snapshot_holdings
     )
     select snapshot_date::varchar as date from compared
     where n > 1 and holdings is distinct from previous and snapshot_date between $2::date and $3::date
     order by snapshot_date`,
    [portfolioId, from, to],
  );
  return rows.map((r) => r.date);
}
