import { existsSync, readFileSync } from 'node:fs';
import path from 'node:path';
import type { Config } from '../config/load.ts';
import type { Estimator, VarMethod } from '../config/schema.ts';
import { exceptionsLabel, seriesLabel } from '../labels.ts';
import { CAUTIONS } from '../report/cautions.ts';
import { formatMoney, formatPercent } from '../report/format.ts';
import type { Breach } from '../report/reportData.ts';
import type { Database } from '../storage/database.ts';
import { readCorrectionBothWays, type CorrectionBothWays } from './correctionBothWays.ts';
import { DEMO_LIMIT_WINDOW } from './demoConfig.ts';
import { ACCOUNTS, FIRM_NAME, SECURITIES } from './universe.ts';

/** A limit episode as the summary shows it: the report's breach row without its limit details. */
export type EpisodeSummary = Pick<Breach, 'level' | 'opened_on' | 'escalated_on' | 'closed_on' | 'peak_value' | 'peak_on' | 'retracted'>;

export interface AccountSummary {
  portfolioId: string;
  mandate: string;
  asOf: string | null;
  value: number | null;
  vol: number | null;
  limit: number;
  status: 'within limit' | 'warning' | 'breach';
  /** Episodes of the volatility limit (the backtest zone's are told by `backtest`). */
  episodes: EpisodeSummary[];
  /**
   * The latest backtest of each VaR the demo's zone limit watches (the limit window's
   * normal VaR and every historical lookback): zone and exceptions in the last 250 tested days.
   */
  backtests: BacktestSummary[];
}

export interface BacktestSummary {
  method: VarMethod;
  window_days: number;
  estimator: Estimator | null;
  zone: string | null;
  exceptions_250: number;
  tested_days: number;
}

export interface DemoSummary {
  accounts: AccountSummary[];
  alerts: { kind: string; portfolio_id: string | null; as_of: string | null; text: string | null }[];
  /** Lines of the JSON Lines alert file (each alert delivered there once). */
  alertsInFile: number;
  files: { ingested: number; duplicate: number; rejected: number };
  quarantined: { name: string; error: string; archived_path: string | null }[];
  /** Files that re-delivered prices an earlier file had sent (the later delivery wins). */
  corrections: { name: string; prices: number }[];
  /** The first correction's figures as reported before it arrived and as known now. */
  bothWays: CorrectionBothWays | null;
}

/** Reads the demo's outcome back from the database, so what is printed is what was stored. */
export async function readDemoSummary(db: Database, config: Config): Promise<DemoSummary> {
  const accounts: AccountSummary[] = [];
  for (const account of ACCOUNTS) {
    const [latest] = await db.all<{ date: string; portfolio_value: number | null; vol_ex_ante: number | null }>(
      `select date, portfolio_value, vol_ex_ante from risk_daily
       where portfolio_id = $1 and window_days = $2 and estimator = 'sample' order by date desc limit 1`,
      [account.id, DEMO_LIMIT_WINDOW],
    );
    const episodes = await db.all<EpisodeSummary>(
      `select level, opened_on, escalated_on, closed_on, peak_value, peak_on, retracted from limit_breaches
       where portfolio_id = $1 and window_days = $2 and metric = 'vol_ex_ante' and estimator = 'sample' order by opened_on`,
      [account.id, DEMO_LIMIT_WINDOW],
    );
    const backtests = await db.all<BacktestSummary>(
      `select method, window_days, estimator, zone, exceptions_250,
              (count(*) over (partition by method, window_days, estimator))::integer as tested_days
       from var_backtest
       where portfolio_id = $1 and (method <> 'normal' or (window_days = $2 and estimator = 'sample'))
       qualify row_number() over (partition by method, window_days, estimator order by date desc) = 1
       order by method = 'normal' desc, method, window_days`,
      [account.id, DEMO_LIMIT_WINDOW],
    );
    const open = episodes.find((e) => e.closed_on === null && !e.retracted);
    const limit = config.limits.find((l) => l.portfolio === account.id && l.window === DEMO_LIMIT_WINDOW);
    accounts.push({
      portfolioId: account.id,
      mandate: account.mandate,
      asOf: latest?.date ?? null,
      value: latest?.portfolio_value ?? null,
      vol: latest?.vol_ex_ante ?? null,
      limit: limit?.limit ?? account.volLimit,
      status: open ? open.level : 'within limit',
      episodes,
      backtests,
    });
  }
  const alerts = await db.all<DemoSummary['alerts'][number]>(
    "select kind, portfolio_id, as_of, payload->>'text' as text from alerts order by as_of, created_at, alert_id",
  );
  const counts = await db.all<{ status: string; n: number }>('select status, count(*)::integer as n from ingested_files group by status');
  const count = (status: string) => counts.find((c) => c.status === status)?.n ?? 0;
  const quarantined = await db.all<DemoSummary['quarantined'][number]>(
    "select name, error, archived_path from ingested_files where status = 'rejected' order by file_id",
  );
  const corrections = await db.all<DemoSummary['corrections'][number]>(
    `select f.name, count(*)::integer as prices
     from prices p join ingested_files f using (file_id)
     where exists (select 1 from prices q where q.date = p.date and q.security_id = p.security_id and q.file_id < p.file_id)
     group by f.file_id, f.name order by f.file_id`,
  );
  const file = config.alerts.file;
  const alertsInFile = file && existsSync(file) ? readFileSync(file, 'utf8').split('\n').filter(Boolean).length : 0;
  return {
    accounts,
    alerts,
    alertsInFile,
    files: { ingested: count('ingested'), duplicate: count('duplicate'), rejected: count('rejected') },
    quarantined,
    corrections,
    bothWays: await readCorrectionBothWays(db, corrections[0]?.name),
  };
}

function episodeText(e: EpisodeSummary): string {
  if (e.retracted) return `${e.level} from ${e.opened_on}, retracted`;
  const end = e.closed_on ? `closed ${e.closed_on}` : 'still open';
  return `${e.level} opened ${e.opened_on}, ${end}, peak ${formatPercent(e.peak_value)} on ${e.peak_on}`;
}

function backtestText(b: BacktestSummary): string {
  const zone = b.zone ? `${b.zone} zone` : `no zone before 250 tested days (${b.tested_days} so far)`;
  const series = { metric: 'backtest_zone' as const, method: b.method, window: b.window_days, estimator: b.estimator };
  return `${seriesLabel(series)}: ${exceptionsLabel(b.exceptions_250)} in the last 250 tested days, ${zone}`;
}

const pad = (text: string, width: number) => text.padEnd(width);
const padLeft = (text: string, width: number) => text.padStart(width);

export interface SummaryPlaces {
  dir: string;
  config: Config;
  reportFile: string;
  deliveries: number;
  seconds: number;
}

/** The summary the demo prints: accounts against limits, alerts, quarantine, places, commands to try, cautions. */
export function formatSummary(summary: DemoSummary, places: SummaryPlaces): string {
  const { config } = places;
  const asOf = summary.accounts.map((a) => a.asOf).filter(Boolean).sort().at(-1) ?? 'n/a';
  const lines: string[] = [
    `riskfold demo: ${FIRM_NAME}, an invented wealth manager (${ACCOUNTS.length} accounts, ${SECURITIES.length} securities, all made up)`,
    `Folder: ${places.dir}`,
    `Processed ${places.deliveries} deliveries (a history load, then one per business day) in ${places.seconds.toFixed(1)} s: ` +
      `${summary.files.ingested} files ingested, ${summary.files.duplicate} duplicates, ${summary.files.rejected} rejected.`,
    '',
    `Accounts on ${asOf}: ${DEMO_LIMIT_WINDOW}-day ex-ante volatility against the mandate limit`,
    `  ${pad('account', 14)} ${pad('mandate', 9)} ${padLeft(`value ${config.baseCurrency}`, 13)} ${padLeft('vol', 8)} ${padLeft('limit', 8)}  status`,
  ];
  for (const a of summary.accounts) {
    lines.push(
      `  ${pad(a.portfolioId, 14)} ${pad(a.mandate, 9)} ${padLeft(formatMoney(a.value), 13)} ${padLeft(formatPercent(a.vol), 8)} ${padLeft(formatPercent(a.limit), 8)}  ${a.status}`,
    );
    for (const e of a.episodes) lines.push(`  ${' '.repeat(14)} episode: ${episodeText(e)}`);
    for (const b of a.backtests) lines.push(`  ${' '.repeat(14)} backtest: ${backtestText(b)}`);
  }
  lines.push('', `Alerts raised: ${summary.alerts.length} (${summary.alertsInFile} lines in ${config.alerts.file ?? 'no alert file'})`);
  for (const a of summary.alerts) lines.push(`  ${a.as_of ?? '----------'}  ${pad(a.kind, 16)} ${a.text ?? ''}`);
  lines.push('', 'Quarantined files:');
  if (summary.quarantined.length === 0) lines.push('  none');
  for (const q of summary.quarantined) lines.push(`  ${q.name}: ${q.error}`, `    now at ${q.archived_path ?? 'n/a'}`);
  lines.push('', 'Corrections (later files that re-delivered earlier prices; the later delivery counts):');
  if (summary.corrections.length === 0) lines.push('  none');
  for (const c of summary.corrections) lines.push(`  ${c.name}: ${c.prices} price${c.prices === 1 ? '' : 's'}`);
  const cfg = config.configPath;
  lines.push(...bothWaysLines(summary.bothWays, cfg));
  lines.push(
    '',
    'Where things are:',
    `  config    ${cfg}`,
    `  database  ${config.database}`,
    `  read copy ${config.readCopy}`,
    `  report    ${places.reportFile}`,
    `  alerts    ${config.alerts.file ?? 'n/a'}`,
    `  files     ${path.relative(places.dir, config.archive)}/ (ingested), ${path.relative(places.dir, config.quarantine)}/ (rejected, with a reason file)`,
    '',
    'Try:',
    `  npx riskfold sql --config ${cfg} "select portfolio_id, date, vol_ex_ante, vol_realized from risk_daily where window_days = ${DEMO_LIMIT_WINDOW} and estimator = 'sample' order by date desc limit 6"`,
    `  npx riskfold sql --config ${cfg} "select portfolio_id, level, opened_on, closed_on, peak_value from limit_breaches"`,
    `  npx riskfold sql --config ${cfg} "select security_id, weight, pct from risk_contributions where portfolio_id = '${summary.accounts[0].portfolioId}' order by pct desc"`,
    `  npx riskfold sql --config ${cfg} "select * from check_data_quality where problem = 'stale_price'"`,
    `  npx riskfold sql --config ${cfg} "select method, window_days, estimator, var_99_1d, es_975_1d from var_daily where portfolio_id = 'fpw-growth' and date = (select max(date) from var_daily) order by all"`,
    `  npx riskfold sql --config ${cfg} "select scenario_id, kind, pnl_base, pnl_pct from stress_results where portfolio_id = 'fpw-growth' and date = (select max(date) from stress_results) order by pnl_base"`,
    `  npx riskfold sql --config ${cfg} "select portfolio_id, dimension, bucket, weight from exposure_daily where date = (select max(date) from exposure_daily) order by all"`,
    `  npx riskfold sql --config ${cfg} "select portfolio_id, benchmark_id, date, tracking_error_ex_ante, tracking_error_realized, beta_to_benchmark from risk_daily where benchmark_id is not null and window_days = ${DEMO_LIMIT_WINDOW} order by date desc limit 3"`,
    `  npx riskfold sql --config ${cfg} "select portfolio_id, date, vol_now - vol_prev as change, from_market, from_weights, weights_driver_security_id from vol_change where window_days = ${DEMO_LIMIT_WINDOW} and estimator = 'sample' order by date desc limit 6"`,
    `  npx riskfold sql --config ${cfg} "select portfolio_id, date, vol_ex_ante, shrinkage_intensity from risk_daily where estimator = 'shrunk' order by date desc limit 6"`,
    `  npx riskfold status --config ${cfg}`,
    `  npx riskfold report --config ${cfg} --portfolio ${summary.accounts[0].portfolioId}`,
    `  npx riskfold report --config ${cfg} --all`,
    ...explainLine(summary, cfg),
    '',
    'Cautions:',
    ...CAUTIONS.map((c) => `  - ${c}`),
  );
  return `${lines.join('\n')}\n`;
}

/** The correction as reported before it arrived and as known now, each with the one query that shows it. */
function bothWaysLines(both: CorrectionBothWays | null, cfg: string): string[] {
  if (both === null) return [];
  const lines = [
    '',
    `The correction both ways: ${DEMO_LIMIT_WINDOW}-day volatility on ${both.date}, as reported before ${both.file} arrived and as known now`,
    `  ${pad('account', 14)} ${padLeft('as reported', 12)} ${pad('status', 14)} ${padLeft('as known now', 13)} status`,
  ];
  for (const r of both.rows) {
    const [before, now] = [formatPercent(r.as_reported, 3), formatPercent(r.as_known, 3)];
    lines.push(`  ${pad(r.portfolio_id, 14)} ${padLeft(before, 12)} ${pad(r.reported_status ?? '', 14)} ${padLeft(now, 13)} ${r.known_status ?? ''}`);
  }
  lines.push(
    `  as reported: npx riskfold sql --config ${cfg} "${both.asReported}"`,
    `  as known:    npx riskfold sql --config ${cfg} "${both.asKnown}"`,
  );
  return lines;
}

function explainLine(summary: DemoSummary, cfg: string): string[] {
  if (summary.bothWays === null) return [];
  const args = `--portfolio ${summary.accounts[0].portfolioId} --date ${summary.bothWays.date} --window ${DEMO_LIMIT_WINDOW}`;
  return [`  npx riskfold explain --config ${cfg} ${args}`];
}
