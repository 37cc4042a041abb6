import type { Config } from '../config/load.ts';
import { readStandings, type PortfolioStanding } from '../read/portfolioStatus.ts';
import type { SeriesRow } from '../limits/breachStore.ts';
import type { Database } from '../storage/database.ts';
import { knownPortfolios } from './reportData.ts';

/** An episode still open, of any portfolio. */
export interface OpenEpisode extends SeriesRow {
  portfolio_id: string;
  level: string;
  opened_on: string;
  escalated_on: string | null;
  peak_value: number;
  peak_on: string;
  limit_value: number;
}

/** One kind of data problem of one portfolio on its latest valuation date. */
export interface PortfolioProblem {
  portfolio_id: string;
  date: string;
  problem: string;
  n: number;
  /** The securities concerned, a few by name, or null for the portfolio itself. */
  securities: string | null;
  example: string;
}

export interface FirmData {
  /** The latest date any portfolio has figures for; null before the first run. */
  asOf: string | null;
  portfolios: string[];
  /** Every portfolio against its limits, as `riskfold status` reads them. */
  standings: PortfolioStanding[];
  openEpisodes: OpenEpisode[];
  problems: PortfolioProblem[];
  database: string;
}

const SECURITIES_NAMED = 4;

/** Everything the firm-wide page shows, read once. */
export async function loadFirmData(db: Database, config: Config, database = db.path): Promise<FirmData> {
  const [{ as_of: asOf }] = await db.all<{ as_of: string | null }>('select max(date)::varchar as as_of from risk_daily');
  const openEpisodes = await db.all<OpenEpisode>(
    `select portfolio_id, metric, method, window_days, estimator, level, opened_on::varchar as opened_on, escalated_on::varchar as escalated_on,
            peak_value, peak_on::varchar as peak_on, limit_value
     from limit_breaches where closed_on is null and not retracted
     order by level = 'breach' desc, opened_on, portfolio_id`,
  );
  const problems = await db.all<PortfolioProblem>(
    `with latest as (select portfolio_id, max(date) as date from risk_daily group by portfolio_id)
     select q.portfolio_id, q.date::varchar as date, q.problem, count(*)::integer as n,
            nullif(array_to_string(list_sort(list(distinct q.security_id) filter (where q.security_id is not null))[1:${SECURITIES_NAMED}], ', '), '') as securities,
            min(q.reason) as example
     from check_data_quality q join latest l on l.portfolio_id = q.portfolio_id and l.date = q.date
     group by all order by q.portfolio_id, q.problem`,
  );
  return {
    asOf,
    portfolios: await knownPortfolios(db),
    standings: (await readStandings(db, config, null)).standings,
    openEpisodes,
    problems,
    database,
  };
}
