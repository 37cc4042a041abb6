import type { Logger } from 'pino';
import { insertAlert } from '../alerts/outbox.ts';
import type { Config } from '../config/load.ts';
import type { Database } from '../storage/database.ts';
import { readColumns } from '../storage/columnar.ts';
import { refreshCheckedSecurities } from './checkedSecurities.ts';
import { priceSuspectAlert } from './priceAlerts.ts';
import { findSuspectPrices, marketMoves, type PricePoint, type SuspectPrice } from './suspectPrices.ts';

/**
 * EWMA with lambda 0.94 gives a return 250 dates old a weight of 0.94^250 (about 2e-7):
 * reading this much history before the first date to check makes the sigma the same as
 * from the very first price, at a fraction of the cost.
 */
const LOOKBACK_DAYS = 400;

export interface PriceCheckOutcome {
  flagged: number;
  cleared: number;
}

interface OpenCheck {
  check_id: number;
  security_id: string;
  date: string;
  price: number;
  reason: string;
}

/**
 * Checks every delivered price dated from `from` (null: all) of the securities ever held or
 * in a benchmark (only they enter risk; a file of prices nobody holds costs nothing)
 * against its security's own history, records the suspect ones in price_checks, clears those a later delivery
 * repeated or corrected, and raises one price_suspect alert when a flag is raised and
 * one when it clears. Runs before the risk stage reads the prices, in its own transaction.
 */
export async function checkPrices(db: Database, config: Config, log: Logger, scope: { from: string | null }): Promise<PriceCheckOutcome> {
  const rules = config.checks.suspectPrices;
  const clog = log.child({ stage: 'checks' });
  await refreshCheckedSecurities(db);
  const series = await readCheckedSeries(db, scope.from);
  const moves = marketMoves(series);
  const found = new Map<string, { securityId: string; price: number; flag: SuspectPrice }>();
  for (const s of series) {
    const movers = moves.get(s.currency)!;
    const points: PricePoint[] = s.dates.map((date, i) => {
      const self = i > 0 && s.prices[i] !== s.prices[i - 1] ? 1 : 0;
      return { date, price: s.prices[i], confirmed: s.confirmed[i], marketMoved: (movers.get(date) ?? 0) - self > 0 };
    });
    for (const flag of findSuspectPrices(points, rules)) {
      if (scope.from !== null && flag.date < scope.from) continue;
      found.set(key(s.securityId, flag.date), { securityId: s.securityId, price: points[flag.index].price, flag });
    }
  }

  // what stands now for an open check's price (a few lookups: no map over every price)
  const bySecurity = new Map(series.map((s) => [s.securityId, s]));
  const held = rules.mode === 'hold';
  return db.transaction(async () => {
    const open = await db.all<OpenCheck>(
      `select check_id, security_id, date::varchar as date, price, reason from price_checks
       where cleared_at is null and ($1::date is null or date >= $1::date)`,
      [scope.from],
    );
    const outcome: PriceCheckOutcome = { flagged: 0, cleared: 0 };
    const stillOpen = new Set<string>();
    for (const o of open) {
      const k = key(o.security_id, o.date);
      const now = found.get(k);
      if (now !== undefined && now.price === o.price) {
        stillOpen.add(k);
        continue;
      }
      const delivered = deliveredOn(bySecurity.get(o.security_id), o.date);
      const why =
        delivered === undefined
          ? 'the price is no longer delivered'
          : delivered.confirmed && delivered.price === o.price
            ? 'confirmed by a repeated delivery'
            : delivered.price !== o.price
              ? `corrected to ${delivered.price}`
              : 'no longer suspect after a recheck';
      await db.run('update price_checks set cleared_at = now(), cleared_reason = $2 where check_id = $1', [o.check_id, why]);
      await insertAlert(db, priceSuspectAlert({ checkId: o.check_id, securityId: o.security_id, date: o.date, price: o.price, reason: o.reason, held }, why));
      outcome.cleared++;
    }
    for (const [k, f] of found) {
      if (stillOpen.has(k)) continue;
      const [{ check_id: checkId }] = await db.all<{ check_id: number }>(
        `insert into price_checks (security_id, date, price, rules, reason, held) values ($1, $2::date, $3, $4, $5, $6) returning check_id`,
        [f.securityId, f.flag.date, f.price, f.flag.rules.join(','), f.flag.reason, held],
      );
      await insertAlert(db, priceSuspectAlert({ checkId, securityId: f.securityId, date: f.flag.date, price: f.price, reason: f.flag.reason, held }, null));
      outcome.flagged++;
    }
    // a change of mode applies to the flags still open
    await db.run('update price_checks set held = $1 where cleared_at is null and held <> $1', [held]);
    if (outcome.flagged + outcome.cleared > 0) clog.warn({ ...outcome, mode: rules.mode }, 'suspect prices checked');
    return outcome;
  });
}

interface CheckedSeries {
  securityId: string;
  currency: string;
  dates: string[];
  prices: number[];
  confirmed: boolean[];
}

/**
 * Each checked security's delivered prices from LOOKBACK_DAYS before `from` (null: all),
 * in date order, with whether a second delivery repeated the price. The rows come back
 * as numbers (the ranks of their security, date and market) and the few distinct ids,
 * dates and markets as text once: decoding three strings for each of the ~290,000 rows
 * of a large book was about half the check's time (0.85-0.99 s to 0.43-0.49 s).
 */
async function readCheckedSeries(db: Database, from: string | null): Promise<CheckedSeries[]> {
  // price_check_securities: the securities of the raw positions and benchmark weights
  // (superseded snapshots too), a superset of what was ever held or is a benchmark's
  // constituent, kept from the rows added since the last check
  await db.run(
    `create or replace temp table check_prices_window as
     with latest as (
       select security_id, date, price, coalesce(currency, '') as market, file_id
       from clean_prices semi join price_check_securities using (security_id)
       where $1::date is null or date >= $1::date - ${LOOKBACK_DAYS}
     ),
     repeated as (
       select p.security_id, p.date from prices p join latest l using (security_id, date)
       where p.price = l.price and p.file_id <> l.file_id and ($1::date is null or p.date >= $1::date - ${LOOKBACK_DAYS})
       group by all
     )
     select l.security_id, l.date, l.price, l.market, r.security_id is not null as confirmed
     from latest l left join repeated r using (security_id, date)`,
    [from],
  );
  // each column's distinct values ranked once: the rows carry the rank, the names come in rank order
  const ranked = async (column: string) => {
    await db.run(
      `create or replace temp table check_prices_${column}s as
       select ${column}, (row_number() over (order by ${column}) - 1)::integer as rank
       from (select distinct ${column} from check_prices_window)`,
    );
    return (await readColumns(db, `select ${column}::varchar as name from check_prices_${column}s order by rank`, undefined, { name: 'text' })).columns.name as string[];
  };
  try {
    const ids = await ranked('security_id');
    const dates = await ranked('date');
    const markets = await ranked('market');
    const { rows, columns: c } = await readColumns(
      db,
      `select i.rank as k, d.rank as day, w.price, m.rank as m, w.confirmed
       from check_prices_window w
       join check_prices_security_ids i using (security_id)
       join check_prices_dates d using (date)
       join check_prices_markets m using (market)
       order by k, day`,
      undefined,
      { k: 'int', day: 'int', price: 'double', m: 'int', confirmed: 'bool' },
    );
    const series: CheckedSeries[] = [];
    for (let i = 0; i < rows; i++) {
      const id = ids[c.k[i]];
      if (series.length === 0 || series[series.length - 1].securityId !== id) {
        series.push({ securityId: id, currency: markets[c.m[i]], dates: [], prices: [], confirmed: [] });
      }
      const s = series[series.length - 1];
      s.dates.push(dates[c.day[i]]);
      s.prices.push(c.price[i]);
      s.confirmed.push(c.confirmed[i] === 1);
    }
    return series;
  } finally {
    for (const table of ['window', 'security_ids', 'dates', 'markets']) await db.run(`drop table if exists check_prices_${table}`);
  }
}

const key = (securityId: string, date: string) => `${securityId}|${date}`;

/** The price read for `date` in a security's series (dates ascending), or undefined. */
function deliveredOn(s: { dates: string[]; prices: number[]; confirmed: boolean[] } | undefined, date: string): { price: number; confirmed: boolean } | undefined {
  if (s === undefined) return undefined;
  let lo = 0;
  let hi = s.dates.length;
  while (lo < hi) {
    const mid = (lo + hi) >> 1;
    if (s.dates[mid] < date) lo = mid + 1;
    else hi = mid;
  }
  return s.dates[lo] === date ? { price: s.prices[lo], confirmed: s.confirmed[lo] } : undefined;
}
