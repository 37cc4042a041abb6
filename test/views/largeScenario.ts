import type { Database } from '../../src/storage/database.ts';

export interface ScenarioSize {
  businessDays: number;
  securities: number;
  portfolios: number;
  holdingsPerPortfolio: number;
}

/** 10 years x 1,000 securities x 50 portfolios of 200 holdings, daily snapshots (~25M position-days). */
export const FULL_SIZE: ScenarioSize = { businessDays: 2520, securities: 1000, portfolios: 50, holdingsPerPortfolio: 200 };

/**
 * Fills the raw tables with an invented scenario generated inside DuckDB (range()), so
 * nothing big is written to disk outside the database. Securities EQ-0000.. trade in
 * USD, EUR or GBP; the EUR ones skip every 40th day (a market holiday carried forward);
 * each portfolio holds a slowly changing set plus CASH:USD, with one snapshot file a day.
 */
export async function generateLargeScenario(db: Database, size: ScenarioSize): Promise<void> {
  const { businessDays, securities, portfolios, holdingsPerPortfolio } = size;
  await db.run(`
    create temp table scenario_days as
    select day_no, date
    from (
      select (row_number() over (order by d))::integer as day_no, d::date as date
      from range(date '2015-01-01', date '2015-01-01' + interval (${businessDays * 2}) day, interval 1 day) t(d)
      where dayofweek(d) between 1 and 5
    )
    where day_no <= ${businessDays}`);
  await db.run(`
    create temp table scenario_securities as
    select s::integer as sec_no, printf('EQ-%04d', s) as security_id, ['USD', 'EUR', 'GBP'][1 + s % 3] as currency
    from range(${securities}) t(s)`);
  await db.run(`
    insert into securities (file_id, line, security_id, name, asset_class, currency)
    select 1, sec_no + 1, security_id, 'Invented ' || security_id, 'equity', currency from scenario_securities`);
  // random-walk prices: cumulative sum of small pseudo-random log steps
  await db.run(`
    insert into prices (file_id, line, date, security_id, price, currency)
    select 1000 + day_no, sec_no + 1, date, security_id,
      50 * exp(sum(((hash(day_no, sec_no) % 2001)::double - 1000) / 1000 * 0.02) over (partition by sec_no order by day_no)),
      currency
    from scenario_days cross join scenario_securities
    qualify not (currency = 'EUR' and day_no % 40 = 0)`);
  await db.run(`
    insert into fx_rates (file_id, line, date, currency, rate)
    select 2, row_number() over (), date, currency, case currency when 'EUR' then 1.1 else 1.3 end + (day_no % 50) / 1000
    from scenario_days cross join (values ('EUR'), ('GBP')) c(currency)`);
  // each holding slot moves to another security once a year, on staggered days, so
  // holdings are sticky as in real portfolios; the snapshot file of a day is 5000 + day_no
  await db.run(`
    insert into positions (file_id, line, date, portfolio_id, security_id, quantity)
    select 5000 + day_no, row_number() over (partition by day_no), date, printf('acct-%02d', p), security_id, quantity
    from (
      -- two slots may land on one security: one row per security, as ingest requires
      select day_no, date, p, security_id, sum(quantity) as quantity
      from (
        select d.day_no, d.date, p, printf('EQ-%04d', (p * 37 + k * 5 + 7 * ((d.day_no + 13 * k) // 252)) % ${securities}) as security_id, 100 + k as quantity
        from scenario_days d, range(${portfolios}) a(p), range(${holdingsPerPortfolio}) h(k)
        union all
        select d.day_no, d.date, p, 'CASH:USD', 10000
        from scenario_days d, range(${portfolios}) a(p)
      )
      group by day_no, date, p, security_id
    )`);
}
