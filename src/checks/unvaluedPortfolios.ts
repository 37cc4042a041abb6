import type { Logger } from 'pino';
import { insertAlert, type NewAlert } from '../alerts/outbox.ts';
import type { Database } from '../storage/database.ts';

/** A holding that leaves its portfolio without a value on the latest valuation date. */
export interface UnvaluedHolding {
  portfolio_id: string;
  security_id: string;
  /** 'missing_price' or 'missing_fx' (value_positions.price_status). */
  price_status: string;
  currency: string | null;
  /** The last date it had a value, and its share of the portfolio's value then. */
  last_valued_on: string | null;
  last_share: number | null;
  /** First date of the portfolio's current run of dates without a value. */
  since: string;
  latest: string;
}

const KIND = 'portfolio_unvalued';

/**
 * After the risk stage: a portfolio that cannot be valued on its latest valuation date
 * (a holding without a price or an fx rate) raises one portfolio_unvalued alert naming
 * those holdings, since when, and their last known share of value; one more when a later
 * run finds it valued again. What is open is kept in data_alert_state. Runs in the risk
 * stage's transaction, for the portfolios of the run.
 */
export async function alertUnvaluedPortfolios(db: Database, log: Logger, scope: { runId: number; portfolios: readonly string[] | null }): Promise<number> {
  const scopeFilter = scope.portfolios === null ? null : JSON.stringify(scope.portfolios);
  const inScope = `($1::varchar is null or list_contains(from_json($1, '["VARCHAR"]'), portfolio_id))`;
  const open = await db.all<{ portfolio_id: string; since: string }>(
    `select portfolio_id, since::varchar as since from data_alert_state where kind = '${KIND}' and ${inScope}`,
    [scopeFilter],
  );
  // the risk stage has just said which portfolios it could not value on the latest date
  // (status unpriced): only they, and those alerted before, are looked at in detail
  const unpriced = await db.all<{ portfolio_id: string }>(
    `select distinct portfolio_id from risk_daily
     where run_id = $2 and ${inScope} and status like '%unpriced%' and date = (select max(date) from align_valuation_dates)`,
    [scopeFilter, scope.runId],
  );
  if (unpriced.length === 0 && open.length === 0) return 0;
  const filter = JSON.stringify([...new Set([...unpriced, ...open].map((p) => p.portfolio_id))]);
  const holdings = await db.all<UnvaluedHolding>(
    // positions carry forward, so every portfolio's latest date is the latest valuation
    // date; a filter on it (not a max over the view) keeps the view to one date
    `with missing as (
       select portfolio_id, security_id, price_status, currency, date as latest
       from value_positions
       where date = (select max(date) from align_valuation_dates) and ${inScope} and value_base is null and quantity <> 0
     ),
     days as (
       select portfolio_id, date, value_base is null as unvalued
       from value_portfolios semi join missing using (portfolio_id)
     ),
     since as (
       select portfolio_id, min(date) filter (where unvalued and date > coalesce(last_ok, '0001-01-01'::date)) as since
       from (select *, max(date) filter (where not unvalued) over (partition by portfolio_id) as last_ok from days)
       group by all
     ),
     last_valued as (
       select portfolio_id, security_id, max(date) as last_valued_on, arg_max(weight, date) as last_share
       from value_weights semi join missing using (portfolio_id, security_id)
       where weight is not null
       group by all
     )
     select m.portfolio_id, m.security_id, m.price_status, m.currency, v.last_valued_on::varchar as last_valued_on, v.last_share,
       s.since::varchar as since, m.latest::varchar as latest
     from missing m join since s using (portfolio_id) left join last_valued v using (portfolio_id, security_id)
     order by m.portfolio_id, m.security_id`,
    [filter],
  );
  const byPortfolio = new Map<string, UnvaluedHolding[]>();
  for (const h of holdings) byPortfolio.set(h.portfolio_id, [...(byPortfolio.get(h.portfolio_id) ?? []), h]);
  let raised = 0;
  for (const [portfolioId, missing] of byPortfolio) {
    if (open.some((o) => o.portfolio_id === portfolioId)) continue;
    const alert = unvaluedAlert(portfolioId, missing);
    if (await insertAlert(db, alert)) raised++;
    await db.run('insert into data_alert_state values ($1, $2, $3, $4::date, $5)', [`${KIND}|${portfolioId}`, KIND, portfolioId, missing[0].since, alert.alertId]);
  }
  for (const o of open) {
    if (byPortfolio.has(o.portfolio_id)) continue;
    const [latest] = await db.all<{ date: string | null }>('select max(date)::varchar as date from value_portfolios where portfolio_id = $1', [o.portfolio_id]);
    if (await insertAlert(db, valuedAgainAlert(o.portfolio_id, o.since, latest?.date ?? null))) raised++;
    await db.run('delete from data_alert_state where problem_key = $1', [`${KIND}|${o.portfolio_id}`]);
  }
  if (raised > 0) log.child({ stage: 'checks', runId: scope.runId }).warn({ raised, unvalued: [...byPortfolio.keys()] }, 'portfolio valuation alerts raised');
  return raised;
}

function unvaluedAlert(portfolioId: string, missing: UnvaluedHolding[]): NewAlert {
  const { since, latest } = missing[0];
  const what = missing.map((h) => {
    const lack = h.price_status === 'missing_fx' ? `no ${h.currency} rate for ${h.security_id}` : `no price for ${h.security_id}`;
    const share = h.last_share === null ? 'never valued' : `last ${(h.last_share * 100).toFixed(1)}% of value on ${h.last_valued_on}`;
    return `${lack} (${share})`;
  });
  return {
    alertId: `unvalued-${portfolioId}-${since}-opened`,
    kind: KIND,
    portfolioId,
    asOf: latest,
    payload: {
      level: 'unvalued',
      episode_state: 'open',
      since,
      holdings: missing.map((h) => ({
        security_id: h.security_id,
        missing: h.price_status === 'missing_fx' ? 'fx' : 'price',
        currency: h.currency,
        last_valued_on: h.last_valued_on,
        last_share: h.last_share,
      })),
      text: `${portfolioId} has no value since ${since}: ${what.join('; ')}; its risk figures are blank until it can be valued`,
    },
  };
}

function valuedAgainAlert(portfolioId: string, since: string, asOf: string | null): NewAlert {
  return {
    alertId: `unvalued-${portfolioId}-${since}-cleared`,
    kind: KIND,
    portfolioId,
    asOf,
    payload: { level: 'valued', episode_state: 'closed', since, text: `${portfolioId} can be valued again${asOf === null ? '' : ` on ${asOf}`} (it had no value since ${since})` },
  };
}
