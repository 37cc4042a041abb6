import type { Config } from '../config/load.ts';
import { applicableLimits, isCountMetric, limitKey, type Series } from '../limits/applicableLimits.ts';
import { metricSql, seriesKey, seriesOf, type SeriesRow } from '../limits/breachStore.ts';
import { levelReachedOn } from '../limits/episodes.ts';
import type { QueryResult, Unit } from './readQuery.ts';
import type { Database } from '../storage/database.ts';

interface LatestRow {
  portfolio_id: string;
  date: string;
  portfolio_value: number | null;
  coverage: number | null;
  status: string;
}

interface EpisodeRow extends SeriesRow {
  portfolio_id: string;
  level: string;
  opened_on: string;
  escalated_on: string | null;
  closed_on: string | null;
}

/** One watched figure of one portfolio on its latest valuation date. */
export interface WatchedFigure {
  series: Series;
  /** The figure (null: no value on that date); a fraction, or a count for backtest_zone. */
  value: number | null;
  limit: number;
  /** Limit minus figure. */
  headroom: number | null;
  /** `clear`, `warning` or `breach`, since `since` (null: never opened). */
  episode: string;
  since: string | null;
}

/** A portfolio against its limits: what `status` and the firm page show first. */
export interface PortfolioStanding {
  portfolioId: string;
  asOf: string;
  value: number | null;
  coverage: number | null;
  status: string;
  /** Per watched series (`watchedSeries` order), its figure, or null: no limit applies to this portfolio. */
  figures: (WatchedFigure | null)[];
}

/**
 * Each portfolio on its latest valuation date: the value in base currency, each watched
 * figure against its limit with the headroom left and the state of its episode, then
 * coverage and status. Coverage and status are those of the first watched estimate of
 * risk_daily (without one: the first configured window, sample). `portfolio` narrows it
 * to one portfolio.
 */
export async function readStandings(db: Database, config: Config, portfolio: string | null): Promise<{ series: Series[]; standings: PortfolioStanding[] }> {
  const series = watchedSeries(config);
  // a historical VaR's backtest has no risk_daily estimate of its own
  const estimate = series.find((s) => s.method === null || s.method === 'normal') ?? { window: config.risk.windows[0], estimator: 'sample' };
  const base = new Map((await latestRows(db, estimate, portfolio)).map((r) => [r.portfolio_id, r]));
  const asOf = await latestDates(db, portfolio);
  const figures: Map<string, number | null>[] = [];
  for (const s of series) figures.push(await latestFigures(db, s, portfolio));
  const episodes = await latestEpisodes(db, portfolio);
  const standings = [...asOf].map(([id, date]): PortfolioStanding => {
    const head = base.get(id);
    const limits = applicableLimits(config.limits, id);
    return {
      portfolioId: id,
      asOf: date,
      value: head?.portfolio_value ?? null,
      coverage: head?.coverage ?? null,
      status: head?.status ?? 'no_risk_rows',
      figures: series.map((s, i) => {
        const limit = limits.find((l) => limitKey(l) === limitKey(s));
        if (!limit) return null;
        const value = figures[i].get(id) ?? null;
        const [episode, since] = episodeState(episodes.get(seriesKey(id, s)));
        return { series: s, value, limit: limit.limit, headroom: value === null ? null : limit.limit - value, episode, since };
      }),
    };
  });
  return { series, standings };
}

/**
 * `status`'s first table: one row per portfolio and watched figure (figure, limit,
 * headroom, episode, since), the portfolio's date, value, coverage and status on each of
 * its rows, so the table stays as narrow with ten watched figures as with one; a
 * portfolio no limit applies to has one row with no figure.
 */
export async function readPortfolioStatus(db: Database, config: Config, portfolio: string | null): Promise<QueryResult> {
  const { standings } = await readStandings(db, config, portfolio);
  const columns = ['portfolio_id', 'as_of', 'value_base', 'watching', 'figure', 'limit', 'headroom', 'episode', 'since', 'coverage', 'status'];
  const rows: unknown[][] = [];
  const rowUnits: (Unit | null)[][] = [];
  for (const p of standings) {
    const watched = p.figures.filter((f) => f !== null);
    for (const f of watched.length > 0 ? watched : [null]) {
      rows.push([p.portfolioId, p.asOf, p.value, f && seriesName(f.series), f?.value ?? null, f?.limit ?? null, f?.headroom ?? null, f?.episode ?? null, f?.since ?? null, p.coverage, p.status]);
      // a backtest zone watches a count of exceptions, every other figure a fraction
      const unit = f && isCountMetric(f.series.metric) ? null : 'percent';
      rowUnits.push([null, null, 'amount', null, unit, unit, unit, null, null, 'percent', null]);
    }
  }
  return { columns, rows, units: rowUnits[0] ?? [], rowUnits };
}

/** Each distinct figure some limit watches, in config order. */
function watchedSeries(config: Config): Series[] {
  const seen = new Map<string, Series>();
  for (const l of config.limits) if (!seen.has(limitKey(l))) seen.set(limitKey(l), { metric: l.metric, method: l.method, window: l.window, estimator: l.estimator });
  return [...seen.values()];
}

/** `vol_ex_ante_63d`, `vol_ex_ante_ewma`, `backtest_zone_historical_250d`: the column stem of one watched figure. */
function seriesName(s: Series): string {
  const stem = s.method === null ? s.metric : `${s.metric}_${s.method}`;
  return s.estimator === 'ewma' ? `${stem}_ewma` : `${stem}_${s.window}d`;
}

/** `breach` since its escalation, `warning` since it opened, `clear` since the last episode closed (null: never opened). */
function episodeState(e: EpisodeRow | undefined): [string, string | null] {
  if (!e) return ['clear', null];
  if (e.closed_on !== null) return ['clear', e.closed_on];
  return [e.level, levelReachedOn(e.level, e.opened_on, e.escalated_on)];
}

async function latestDates(db: Database, portfolio: string | null): Promise<Map<string, string>> {
  const rows = await db.all<{ portfolio_id: string; date: string }>(
    `select portfolio_id, max(date) as date from risk_daily
     where $1::varchar is null or portfolio_id = $1 group by portfolio_id order by portfolio_id`,
    [portfolio],
  );
  return new Map(rows.map((r) => [r.portfolio_id, r.date]));
}

/** Per portfolio, the latest risk_daily row of one estimate. */
async function latestRows(db: Database, s: Pick<Series, 'window' | 'estimator'>, portfolio: string | null): Promise<LatestRow[]> {
  return db.all<LatestRow>(
    `select portfolio_id, date, portfolio_value, coverage, status from risk_daily
     where window_days = $1 and estimator = $2 and ($3::varchar is null or portfolio_id = $3)
     qualify row_number() over (partition by portfolio_id order by date desc) = 1`,
    [s.window, s.estimator, portfolio],
  );
}

/**
 * Per portfolio, the watched figure on its latest valuation date, from the figure's own
 * rows (risk_daily, or var_backtest for backtest_zone); absent when that date has none.
 */
async function latestFigures(db: Database, s: Series, portfolio: string | null): Promise<Map<string, number | null>> {
  const { value, rows: from } = metricSql(s);
  const rows = await db.all<{ portfolio_id: string; value: number | null }>(
    `select m.portfolio_id, ${value} as value from ${from} m
     join (select portfolio_id, max(date) as date from risk_daily group by portfolio_id) latest using (portfolio_id, date)
     where m.window_days = $1 and m.estimator is not distinct from $2 and ($3::varchar is null or m.portfolio_id = $3)`,
    [s.window, s.estimator, portfolio],
  );
  return new Map(rows.map((r) => [r.portfolio_id, r.value]));
}

/** The latest episode, not retracted, of each watched series, keyed by seriesKey. */
async function latestEpisodes(db: Database, portfolio: string | null): Promise<Map<string, EpisodeRow>> {
  const rows = await db.all<EpisodeRow>(
    `select portfolio_id, metric, method, window_days, estimator, level, opened_on, escalated_on, closed_on
     from limit_breaches
     where not retracted and ($1::varchar is null or portfolio_id = $1)
     qualify row_number() over (partition by portfolio_id, metric, method, window_days, estimator order by opened_on desc) = 1`,
    [portfolio],
  );
  return new Map(rows.map((r) => [seriesKey(r.portfolio_id, seriesOf(r)), r]));
}
