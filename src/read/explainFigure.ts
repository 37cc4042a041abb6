import type { DuckDBValue } from '@duckdb/node-api';
import { RiskfoldError } from '../errors.ts';
import type { Database } from '../storage/database.ts';
import { requireKnownPortfolios } from './portfolios.ts';
import { readTable, type QueryResult, type Unit } from './readQuery.ts';
import type { StatusSection } from './readStatus.ts';

export interface ExplainRequest {
  portfolio: string;
  /** 'YYYY-MM-DD', a valuation date. */
  date: string;
  /** One window (0 = ewma); null: every window computed for the date. */
  window: number | null;
}

const HOLDINGS_SHOWN = 10;

const PERCENT = new Set(['vol_ex_ante', 'vol_realized', 'ann_return', 'coverage', 'weight', 'ann_vol']);
const AMOUNT = new Set(['portfolio_value', 'var_99_1d', 'es_975_1d', 'value_base']);

/**
 * Where one of risk_daily's figures came from, as sections to print: the figure with its
 * statuses and covariance coverage, the largest holdings (weight and volatility), the
 * holdings' pairwise correlations over each sample window (a summary of the covariance), the data
 * problems of the date, the files behind it (trace_result_files) with their arrival, and
 * every version of the figure with the runs that made and replaced it (risk_daily_history).
 */
export async function readExplanation(db: Database, request: ExplainRequest): Promise<StatusSection[]> {
  await requireKnownPortfolios(db, [request.portfolio]);
  const { portfolio, date, window } = request;
  const key: DuckDBValue[] = [portfolio, date, window];
  const inWindow = '($3::integer is null or window_days = $3::integer)';
  const figure = await section(
    db,
    'figure',
    `${portfolio} on ${date}: the figures`,
    `select window_days, estimator, portfolio_value, vol_ex_ante, vol_realized, ann_return, var_99_1d, es_975_1d,
            diversification_ratio, coverage, n_covered || ' of ' || n_holdings as covariance_covers, status, run_id
     from risk_daily where portfolio_id = $1 and date = $2::date and ${inWindow}
     order by estimator desc, window_days`,
    key,
  );
  if (figure.total === 0) {
    const which = window === null ? '' : ` for window ${window}`;
    const why = 'not a valuation date, or not computed yet';
    throw new RiskfoldError('not_found', `no figure of ${portfolio} on ${date}${which} in risk_daily (${why})`);
  }
  const windows = (
    await db.all<{ w: number }>(
      `select distinct window_days as w from risk_daily where portfolio_id = $1 and date = $2::date and ${inWindow} order by 1`,
      key,
    )
  ).map((r) => r.w);
  return [
    figure,
    await section(
      db,
      'holdings',
      `largest holdings (by absolute weight; volatility per window, 0 = ewma)`,
      `select w.security_id, w.currency, w.value_base, w.weight,
              ${windows.map((w) => `max(s.ann_vol) filter (where s.window_days = ${w}) as ann_vol_${w}`).join(', ')},
              w.price_status
       from value_weights w
       left join security_stats s on s.security_id = w.security_id and s.date = w.date
       where w.portfolio_id = $1 and w.date = $2::date
       group by all order by abs(any_value(w.weight)) desc, w.security_id limit ${HOLDINGS_SHOWN}`,
      [portfolio, date],
    ),
    await section(
      db,
      'covariance',
      'covariance summary: pairwise correlation of the holdings\' daily log returns over each sample window',
      `with held as (
         select security_id, date_index from value_weights
         where portfolio_id = $1 and date = $2::date and not is_cash and weight <> 0
       ),
       windows as (
         select distinct window_days from risk_daily
         where portfolio_id = $1 and date = $2::date and estimator = 'sample' and ${inWindow}
       ),
       returns as (
         select w.window_days, r.security_id, r.date_index, r.log_return
         from windows w cross join held h
         join ret_securities r on r.security_id = h.security_id
           and r.date_index between h.date_index - w.window_days + 1 and h.date_index
       ),
       pairs as (
         select a.window_days, a.security_id as first_id, b.security_id as second_id, corr(a.log_return, b.log_return) as correlation
         from returns a join returns b
           on a.window_days = b.window_days and a.date_index = b.date_index and a.security_id < b.security_id
         group by all
       )
       select window_days, count(*) as pairs, avg(correlation) as mean_correlation,
              min(correlation) as lowest, max(correlation) as highest
       from pairs group by window_days order by window_days`,
      key,
    ),
    await section(
      db,
      'problems',
      'data problems on the date',
      `select problem, security_id, reason from check_data_quality
       where date = $2::date and (portfolio_id = $1 or security_id in (
         select security_id from value_weights where portfolio_id = $1 and date = $2::date))
       order by problem, security_id`,
      [portfolio, date],
    ),
    await section(
      db,
      'files',
      'files whose rows entered the window',
      `select t.kind, t.file_id, f.name, f.received_at, list(distinct t.window_days order by t.window_days) as windows
       from trace_result_files t join ingested_files f using (file_id)
       where t.portfolio_id = $1 and t.date = $2::date and ${inWindow.replaceAll('window_days', 't.window_days')}
       group by all order by f.received_at, t.file_id, t.kind`,
      key,
    ),
    await section(
      db,
      'versions',
      'every version of the figure: made by a run, current until a run replaced it',
      `with versions as (
         select window_days, estimator, vol_ex_ante, status,
                run_id as made_by_run, null::integer as replaced_by_run, null::timestamptz as replaced_at
         from risk_daily where portfolio_id = $1 and date = $2::date and ${inWindow}
         union all
         select window_days, estimator, vol_ex_ante, status, written_by_run, replaced_by_run, valid_to
         from risk_daily_history where portfolio_id = $1 and date = $2::date and ${inWindow}
       )
       select v.window_days, v.estimator, v.vol_ex_ante, v.status,
              v.made_by_run, m.trigger as made_by, m.finished_at as current_from,
              v.replaced_by_run, r.trigger as replaced_by, v.replaced_at as current_until
       from versions v
       left join risk_runs m on m.run_id = v.made_by_run
       left join risk_runs r on r.run_id = v.replaced_by_run
       order by v.estimator desc, v.window_days, m.finished_at`,
      key,
    ),
  ];
}

async function section(db: Database, key: string, title: string, sql: string, params: DuckDBValue[]): Promise<StatusSection> {
  const result: QueryResult = await readTable(db, sql, params);
  result.units = result.columns.map(unitOf);
  return { key, title, result, total: result.rows.length };
}

function unitOf(column: string): Unit | null {
  if (PERCENT.has(column) || column.startsWith('ann_vol_')) return 'percent';
  return AMOUNT.has(column) ? 'amount' : null;
}
