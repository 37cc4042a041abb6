import { createHash } from 'node:crypto';
import { readFileSync } from 'node:fs';
import type { Config, ResolvedLimit } from '../config/load.ts';
import type { Estimator } from '../config/schema.ts';
import { RiskfoldError } from '../errors.ts';
import { applicableLimits } from '../limits/applicableLimits.ts';
import type { SeriesRow } from '../limits/breachStore.ts';
import { sqlString, type Database } from '../storage/database.ts';
import { correlationOfReturns, type CorrelationResult, type ReturnObservation } from './correlation.ts';
import { loadCurrencySplits, type CurrencySplit } from './currencySplit.ts';
import { loadLossData, type LossData } from './lossData.ts';
import { loadExposure, type ExposureData } from './exposureData.ts';
import { loadHoldings, loadRebalances, type Holding } from './holdingsData.ts';
import { loadVolChange, type VolChangeReport } from './volChangeData.ts';

export interface RiskPoint {
  date: string;
  window_days: number;
  estimator: Estimator;
  vol_ex_ante: number | null;
  vol_realized: number | null;
}

export interface LatestRisk extends RiskPoint {
  portfolio_value: number | null;
  ann_return: number | null;
  var_99_1d: number | null;
  es_975_1d: number | null;
  var_99_10d: number | null;
  es_975_10d: number | null;
  diversification_ratio: number | null;
  coverage: number | null;
  status: string;
  run_id: number;
}

export interface Contribution {
  security_id: string;
  name: string | null;
  weight: number;
  mcr: number | null;
  ccr: number | null;
  pct: number | null;
}

export interface Breach extends SeriesRow {
  breach_id: number;
  limit_value: number;
  level: 'warning' | 'breach';
  opened_on: string;
  escalated_on: string | null;
  closed_on: string | null;
  peak_value: number;
  peak_on: string;
  retracted: boolean;
}

/** One kind of problem of one security (or of the whole portfolio), over the dates it was flagged. */
export interface QualityFlag {
  problem: string;
  security_id: string | null;
  n: number;
  first_date: string;
  last_date: string;
  latest_reason: string;
}

export interface ReportData {
  portfolioId: string;
  asOf: string;
  baseCurrency: string;
  windows: number[];
  /** The window the realized-vs-ex-ante chart and the contributions use: the limit's, else 63, else the first. */
  focusWindow: number;
  limits: ResolvedLimit[];
  /** First date of the line charts (CHART_DATES valuation dates up to asOf). */
  chartFrom: string;
  series: RiskPoint[];
  latest: LatestRisk[];
  contributions: { date: string | null; rows: Contribution[] };
  /** Why the focus window's volatility moved, day by day over the charts' dates. */
  volChange: VolChangeReport;
  correlation: (CorrelationResult & { names: string[]; window: number }) | { error: string };
  exposure: ExposureData;
  /** Every position on asOf, cash included, largest weight first; unvalued ones last. */
  holdings: Holding[];
  /** Dates on the charts where a new snapshot changed the holdings or quantities. */
  rebalances: string[];
  breaches: Breach[];
  quality: QualityFlag[];
  losses: LossData;
  /** Per sample window: volatility with and without the fx returns. */
  currency: CurrencySplit[];
  provenance: { runId: number | null; runFinishedAt: string | null; trigger: string | null; configHash: string; database: string };
}

/** Valuation dates the line charts cover (about six months). */
export const CHART_DATES = 126;
const TOP_HOLDINGS = 10;
const CORRELATION_WINDOW = 63;
const QUALITY_ROWS = 20;

/** Lists the portfolios the database knows, for the "no such portfolio" message. */
export async function knownPortfolios(db: Database): Promise<string[]> {
  const rows = await db.all<{ portfolio_id: string }>('select distinct portfolio_id from positions order by portfolio_id');
  return rows.map((r) => r.portfolio_id);
}

/** Reads everything the report shows for one portfolio; throws not_found for an unknown one. */
export async function loadReportData(db: Database, config: Config, portfolioId: string, database = db.path): Promise<ReportData> {
  const known = await knownPortfolios(db);
  if (!known.includes(portfolioId)) {
    const list = known.length ? known.join(', ') : 'none yet';
    throw new RiskfoldError('not_found', `portfolio "${portfolioId}" is not in ${database} (known: ${list})`);
  }
  const [{ as_of: asOf } = { as_of: null }] = await db.all<{ as_of: string | null }>(
    'select max(date) as as_of from risk_daily where portfolio_id = $1',
    [portfolioId],
  );
  if (asOf === null) {
    throw new RiskfoldError('not_found', `portfolio "${portfolioId}" has no risk figures yet: run "riskfold recompute"`);
  }
  const limits = applicableLimits(config.limits, portfolioId);
  const windows = [...config.risk.windows].sort((a, b) => a - b);
  const limitWindow = limits.find((l) => l.estimator === 'sample')?.window;
  const focusWindow = limitWindow ?? (windows.includes(63) ? 63 : windows[0]);

  // the charts show the latest half year: a breach of last week stays readable (the full history is in risk_daily)
  const [{ chart_from: chartFrom }] = await db.all<{ chart_from: string }>(
    `select min(date) as chart_from from (
       select distinct date from risk_daily where portfolio_id = $1 order by date desc limit ${CHART_DATES})`,
    [portfolioId],
  );
  const series = await db.all<RiskPoint>(
    `select date, window_days, estimator, vol_ex_ante, vol_realized
     from risk_daily where portfolio_id = $1 and date >= $2 order by estimator, window_days, date`,
    [portfolioId, chartFrom],
  );
  const latest = await db.all<LatestRisk>(
    'select * from risk_daily where portfolio_id = $1 and date = $2 order by estimator desc, window_days',
    [portfolioId, asOf],
  );
  return {
    portfolioId,
    asOf,
    baseCurrency: config.baseCurrency,
    windows,
    focusWindow,
    limits,
    chartFrom,
    series,
    latest,
    contributions: await loadContributions(db, portfolioId, focusWindow),
    volChange: await loadVolChange(db, portfolioId, focusWindow, chartFrom, asOf),
    correlation: await loadCorrelation(db, portfolioId, asOf),
    exposure: await loadExposure(db, portfolioId, asOf, focusWindow),
    holdings: await loadHoldings(db, portfolioId, asOf),
    rebalances: await loadRebalances(db, portfolioId, chartFrom, asOf),
    breaches: await db.all<Breach>('select * from limit_breaches where portfolio_id = $1 order by opened_on, breach_id', [portfolioId]),
    quality: await loadQuality(db, portfolioId),
    losses: await loadLossData(db, portfolioId, asOf, focusWindow, chartFrom),
    currency: await loadCurrencySplits(db, portfolioId, asOf, windows, config.risk.tradingDaysPerYear),
    provenance: await loadProvenance(db, config, latest, database),
  };
}

async function loadContributions(db: Database, portfolioId: string, window: number): Promise<ReportData['contributions']> {
  const rows = await db.all<Contribution & { date: string }>(
    `with latest as (
       select max(date) as date from risk_contributions
       where portfolio_id = $1 and window_days = $2 and estimator = 'sample'
     )
     select c.date, c.security_id, s.name, c.weight, c.mcr, c.ccr, c.pct
     from risk_contributions c
     join latest on c.date = latest.date
     left join clean_securities s on s.security_id = c.security_id
     where c.portfolio_id = $1 and c.window_days = $2 and c.estimator = 'sample'
     order by c.pct desc nulls last, c.security_id`,
    [portfolioId, window],
  );
  return { date: rows[0]?.date ?? null, rows };
}

async function loadCorrelation(db: Database, portfolioId: string, asOf: string): Promise<ReportData['correlation']> {
  const top = await db.all<{ security_id: string; name: string | null }>(
    `select w.security_id, s.name
     from value_weights w left join clean_securities s on s.security_id = w.security_id
     where w.portfolio_id = $1 and w.date = $2 and not w.is_cash and w.weight is not null
     order by w.weight desc, w.security_id limit ${TOP_HOLDINGS}`,
    [portfolioId, asOf],
  );
  if (top.length === 0) return { error: 'the portfolio holds no securities on this date' };
  const rows = await db.all<ReturnObservation>(
    `with last_index as (select date_index from align_valuation_dates where date = $1)
     select r.security_id, r.date_index, r.log_return
     from ret_securities r, last_index l
     where r.date_index > l.date_index - ${CORRELATION_WINDOW} and r.date_index <= l.date_index
       and r.security_id in (${top.map((t) => sqlString(t.security_id)).join(', ')})`,
    [asOf],
  );
  try {
    const result = correlationOfReturns(
      top.map((t) => t.security_id),
      rows,
    );
    return { ...result, names: top.map((t) => t.name ?? t.security_id), window: CORRELATION_WINDOW };
  } catch (err) {
    return { error: (err as Error).message };
  }
}

async function loadQuality(db: Database, portfolioId: string): Promise<QualityFlag[]> {
  return db.all<QualityFlag>(
    `select problem, security_id, count(*)::integer as n, min(date) as first_date, max(date) as last_date,
       arg_max(reason, date) as latest_reason
     from check_data_quality where portfolio_id = $1
     group by problem, security_id
     order by max(date) desc, problem, security_id nulls first
     limit ${QUALITY_ROWS}`,
    [portfolioId],
  );
}

async function loadProvenance(db: Database, config: Config, latest: LatestRisk[], database: string): Promise<ReportData['provenance']> {
  const runId = latest.length ? Math.max(...latest.map((r) => Number(r.run_id))) : null;
  const [run] = runId === null ? [] : await db.all<{ finished_at: string | null; trigger: string }>(
    'select finished_at::varchar as finished_at, trigger from risk_runs where run_id = $1',
    [runId],
  );
  // the hash of the config file as written, so two reports can be told apart by their settings
  const configHash = createHash('sha256').update(readFileSync(config.configPath)).digest('hex').slice(0, 12);
  return { runId, runFinishedAt: run?.finished_at ?? null, trigger: run?.trigger ?? null, configHash, database };
}
