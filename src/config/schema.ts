import cron from 'node-cron';
import { z } from 'zod';
import { currencyCode } from './codes.ts';
import { checkStressScenarios, stressSchema } from './stressSchema.ts';

/**
 * The single source of truth for pipeline.config.json: types, defaults, the JSON
 * Schema shipped for editors (npm run schema) and the README's config reference all
 * come from here.
 */

export const FILE_KINDS = ['prices', 'positions', 'fx', 'securities', 'benchmarks'] as const;
export type FileKind = (typeof FILE_KINDS)[number];

export const CANONICAL_COLUMNS: Record<FileKind, { required: string[]; optional: string[] }> = {
  prices: { required: ['date', 'security_id', 'price'], optional: ['currency'] },
  positions: { required: ['date', 'portfolio_id', 'security_id', 'quantity'], optional: [] },
  fx: { required: ['date', 'currency', 'rate'], optional: [] },
  securities: { required: ['security_id'], optional: ['name', 'asset_class', 'currency'] },
  benchmarks: { required: ['date', 'benchmark_id', 'security_id', 'weight'], optional: [] },
};


export const sourceSchema = z
  .object({
    name: z.string().min(1).describe('A label for the custodian or system that sends these files.'),
    kind: z.enum(FILE_KINDS).describe('Which canonical layout the files are mapped onto.'),
    pattern: z.string().min(1).describe('Glob on the file name (not the path), e.g. "prices*.csv*".'),
    delimiter: z.string().length(1).default(',').describe('Field separator, one character.'),
    decimal: z.enum(['.', ',']).default('.').describe('Decimal separator; with "," a "." is read as a thousands separator.'),
    dateFormat: z
      .string()
      .default('%Y-%m-%d')
      .describe('strptime format of the date column (DuckDB syntax), e.g. "%d.%m.%Y".'),
    columns: z
      .record(z.string(), z.string())
      .default({})
      .describe('Map canonical column name -> the name in this source\'s header, e.g. {"price": "Close"}.'),
  })
  .strict();
export type SourceConfig = z.infer<typeof sourceSchema>;

export const DEFAULT_SOURCES: z.input<typeof sourceSchema>[] = [
  { name: 'prices', kind: 'prices', pattern: 'prices*.csv*' },
  { name: 'positions', kind: 'positions', pattern: 'positions*.csv*' },
  { name: 'fx', kind: 'fx', pattern: 'fx*.csv*' },
  { name: 'securities', kind: 'securities', pattern: 'securities*.csv*' },
  { name: 'benchmarks', kind: 'benchmarks', pattern: 'benchmarks*.csv*' },
];

export const LIMIT_METRICS = ['vol_ex_ante', 'vol_realized', 'var_99_1d', 'backtest_zone', 'tracking_error_ex_ante'] as const;

/**
 * The Basel zones as limit levels on the exceptions in 250 tested days (Basel Committee
 * 1996): yellow (warning) from 5, red (breach) from 10, green again below 5.
 */
export const BACKTEST_ZONE_LEVELS = { limit: 10, warning: 5, clear: 4.5 } as const;
export const ESTIMATORS = ['sample', 'ewma', 'shrunk'] as const;
/** The VaR methods of var_daily and var_backtest (SPEC section 9). */
export const VAR_METHODS = ['normal', 'historical', 'filtered_historical'] as const;
export type VarMethod = (typeof VAR_METHODS)[number];
export type Estimator = (typeof ESTIMATORS)[number];

/** A limit level: positive; above 1 only for backtest_zone, whose levels count exceptions (checked with the metric below). */
const levelSchema = z.number().positive();

export const limitSchema = z
  .object({
    portfolio: z.string().min(1).describe('A portfolio id, or "*" for every portfolio; a specific id overrides "*".'),
    metric: z
      .enum(LIMIT_METRICS)
      .default('vol_ex_ante')
      .describe(
        'Figure to watch: of risk_daily (var_99_1d as a fraction of portfolio value; tracking_error_ex_ante needs a benchmark), or backtest_zone, the exceptions in 250 days of a 1-day 99% VaR backtest (var_backtest).',
      ),
    method: z
      .enum(VAR_METHODS)
      .optional()
      .describe(
        'backtest_zone only: the VaR method whose backtest is watched. Absent: every method, the normal VaR of this window and estimator plus the historical and filtered historical VaR of every risk.historical.days.',
      ),
    window: z
      .number()
      .int()
      .min(0)
      .describe('Window in trading days (0 with estimator "ewma"); with method historical or filtered_historical, the scenario days (one of risk.historical.days).'),
    estimator: z.enum(ESTIMATORS).default('sample').describe('Which estimate of risk_daily the limit reads.'),
    limit: levelSchema
      .optional()
      .describe('Mandate limit, a fraction up to 1 (0.15 = 15%); required except for backtest_zone, whose levels count exceptions (default 10: red).'),
    warning: levelSchema.optional().describe('Warning level; default 0.9 x limit (backtest_zone: 5 exceptions, yellow).'),
    clear: levelSchema
      .optional()
      .describe('An episode closes on the first date below this; default 0.85 x limit (backtest_zone: 4.5, back to green).'),
  })
  .strict();

const riskSchema = z
  .object({
    windows: z.array(z.number().int().min(2)).min(1).default([21, 63, 252]).describe('Rolling windows in trading days.'),
    tradingDaysPerYear: z.number().int().positive().default(252).describe('A in sigma = sqrt(A w\'Sw).'),
    maxStaleDays: z
      .number()
      .int()
      .min(0)
      .default(5)
      .describe('A price (or fx rate) is carried forward for at most this many valuation dates, flagged stale.'),
    weights: z
      .enum(['current', 'window_average'])
      .default('current')
      .describe('Weights for vol_ex_ante: at the close of the date, or the mean over the window.'),
    ewma: z
      .object({
        enabled: z.boolean().default(true).describe('Compute the ewma estimator (risk_daily rows with window_days 0).'),
        lambda: z.number().gt(0).lt(1).default(0.94).describe('Decay factor (RiskMetrics daily: 0.94).'),
        seedDays: z
          .number()
          .int()
          .min(2)
          .default(21)
          .describe('A security enters the EWMA matrix after this many consecutive returns, seeded from them with the EWMA weights.'),
      })
      .strict()
      .default({ enabled: true, lambda: 0.94, seedDays: 21 }),
    minCoverage: z
      .number()
      .min(0)
      .max(1)
      .default(0.9)
      .describe('Below this fraction of value with full history, volatility is left null (status says why).'),
    contributions: z
      .enum(['latest', 'all'])
      .default('latest')
      .describe('Keep risk contributions for the latest date of each portfolio only, or for every date.'),
    shrunk: z
      .object({
        windows: z
          .array(z.number().int().min(2))
          .default([])
          .describe(
            'Windows (each one of risk.windows) that also get the shrunk estimator: Ledoit-Wolf shrinkage toward constant correlation, for books with more holdings than the window has days.',
          ),
      })
      .strict()
      .default({ windows: [] }),
    historical: z
      .object({
        days: z
          .array(z.number().int().min(10))
          .min(1)
          .default([250, 500])
          .describe('Scenarios (past valuation dates) of the historical and filtered historical VaR, one var_daily row each.'),
      })
      .strict()
      .default({ days: [250, 500] }),
  })
  .strict();

/** Delivery retry schedule; also used for the alerts file when no webhook is configured. */
export const ALERT_RETRY_DEFAULTS = { maxAttempts: 12, retryBaseMs: 30_000, retryMaxMs: 3_600_000 } as const;

const webhookSchema = z
  .object({
    url: z.url().describe('HTTP(S) endpoint that receives each alert as a JSON POST.'),
    tokenEnv: z.string().optional().describe('Name of the environment variable holding the bearer token.'),
    timeoutMs: z.number().int().positive().default(5000).describe('Time the endpoint has to answer.'),
    maxAttempts: z
      .number()
      .int()
      .positive()
      .default(ALERT_RETRY_DEFAULTS.maxAttempts)
      .describe('After this many failures an alert stays undelivered until retried by hand.'),
    retryBaseMs: z
      .number()
      .int()
      .positive()
      .default(ALERT_RETRY_DEFAULTS.retryBaseMs)
      .describe('Wait after the first failed delivery; it doubles with each further failure.'),
    retryMaxMs: z
      .number()
      .int()
      .positive()
      .default(ALERT_RETRY_DEFAULTS.retryMaxMs)
      .describe('Longest wait between two delivery attempts.'),
  })
  .strict();

const alertsSchema = z
  .object({
    file: z.string().optional().describe('JSON Lines file every alert is appended to.'),
    webhook: webhookSchema.optional(),
    maxAgeDays: z
      .number()
      .int()
      .min(0)
      .default(5)
      .describe('A run over past dates alerts only transitions this many calendar days before its latest valuation date.'),
  })
  .strict();

const suspectPricesSchema = z
  .object({
    mode: z
      .enum(['flag', 'hold'])
      .default('flag')
      .describe('flag: a suspect price is used and flagged; hold: it is left out (the previous price carried forward as stale) until a later delivery repeats or corrects it.'),
    sigmaMultiple: z.number().positive().default(8).describe('A log move beyond this many EWMA daily sigmas (and beyond minLogMove) is suspect.'),
    minLogMove: z.number().positive().default(0.25).describe('Absolute floor: a log move of at most this (0.25: +28% / -22%) is never a jump.'),
    lambda: z.number().gt(0).lt(1).default(0.94).describe('Decay of the EWMA daily sigma each price is checked against.'),
    seedReturns: z.number().int().min(1).default(20).describe('Accepted returns that seed the EWMA sigma; before, only minLogMove applies.'),
    powerOfTenTolerance: z
      .number()
      .min(0)
      .lt(0.5)
      .default(0.02)
      .describe('A move within this many log10 units of a factor 10, 100, 0.1, ... is a unit or separator slip.'),
    unchangedDates: z
      .number()
      .int()
      .min(2)
      .default(10)
      .describe('A price unchanged for this many valuation dates while its market (same currency) moved on most of them is suspect.'),
  })
  .strict();

const checksSchema = z
  .object({
    suspectPrices: suspectPricesSchema.default(suspectPricesSchema.parse({})),
    positionsMaxAgeDays: z
      .number()
      .int()
      .min(1)
      .default(10)
      .describe(
        'A portfolio whose positions snapshot in effect is more than this many calendar days older than a valuation date is listed as a data problem (positions_stale): its risk rests on holdings that may have changed. 10 lets a weekly sender pass and flags a missed week.',
      ),
  })
  .strict();

const scheduleSchema = z
  .object({
    timezone: z.string().default('UTC').describe('IANA time zone the cron expressions run in.'),
    missingData: z
      .object({
        cron: z.string().default('0 22 * * 1-5').describe('When to check that the previous business day\'s files arrived.'),
        expect: z.array(z.enum(FILE_KINDS)).default(['prices', 'positions']).describe('File kinds that must arrive every business day.'),
      })
      .strict()
      .default({ cron: '0 22 * * 1-5', expect: ['prices', 'positions'] }),
    retryAlerts: z.string().default('*/5 * * * *').describe('Cron of the retry of undelivered alerts.'),
    checkpoint: z.string().default('30 2 * * *').describe('Cron of the nightly database checkpoint.'),
    archiveAudit: z
      .string()
      .default('30 3 * * 6')
      .describe('Cron of the full archive audit (every archived file hashed again); a start re-hashes only files whose size or mtime moved.'),
  })
  .strict();

/** DuckDB's own size syntax (a number and a unit), checked here so a typo is a config error, not a failed start. */
const byteSize = z
  .string()
  .regex(/^\d+(\.\d+)?\s*([KMGTkmgt][iI]?)?[Bb]$/, 'a size such as "1GB" or "512MiB"');

export const ENGINE_DEFAULTS = { memoryLimit: '1GB' } as const;

const engineSchema = z
  .object({
    memoryLimit: byteSize
      .default(ENGINE_DEFAULTS.memoryLimit)
      .describe('DuckDB memory_limit: past it DuckDB spills to <database>.tmp/ instead of growing (its own default is 80% of RAM).'),
    threads: z
      .number()
      .int()
      .positive()
      .optional()
      .describe('DuckDB threads; default: one per core. Lower it when the worker shares the machine.'),
  })
  .strict();

const historySchema = z
  .object({
    keepDays: z
      .number()
      .int()
      .positive()
      .nullable()
      .default(null)
      .describe('Superseded result rows replaced more than this many days ago are pruned (each pruning recorded in history_prunes); null keeps everything.'),
  })
  .strict();

const isoDate = z.string().regex(/^\d{4}-\d\d-\d\d$/, 'a date written YYYY-MM-DD');

const ingestSchema = z
  .object({
    earliestDate: isoDate.default('1900-01-01').describe('A row dated before this is refused.'),
    maxDaysAhead: z
      .number()
      .int()
      .min(0)
      .default(7)
      .describe('A row dated more than this many days after the day the file is received is refused.'),
    minMagnitude: z
      .number()
      .positive()
      .default(1e-12)
      .describe('Smallest accepted magnitude of a price, fx rate or non-zero quantity (refuses subnormal values).'),
    maxMagnitude: z
      .number()
      .positive()
      .default(1e15)
      .describe('Largest accepted magnitude of a price, fx rate or quantity (refuses values that overflow a valuation).'),
    benchmarkWeightTolerance: z
      .number()
      .positive()
      .max(1)
      .default(0.01)
      .describe('A benchmarks file is refused when the weights of one benchmark and date add up to further than this from 1 (0.01 absorbs rounded published weights; common practice).'),
    doneMarker: z
      .enum(['none', 'done', 'ok'])
      .default('none')
      .describe('"done" or "ok": a delivery is loaded only once <name>.done (or <name>.ok) lies beside it; the marker is then removed.'),
    manifest: z
      .enum(['none', 'required'])
      .default('none')
      .describe(
        '"required": a delivery is loaded only once <name>.manifest lies beside it (JSON: {"rows": data rows, "sha256": of the bytes as delivered}) and only if both match; a mismatch is quarantined. The manifest then moves with the file.',
      ),
    snapshotKeepShare: z
      .number()
      .min(0)
      .max(1)
      .default(0.5)
      .describe('A positions file is held as suspect when a portfolio\'s snapshot in it has fewer non-zero rows than this share of the non-zero rows of the portfolio\'s latest snapshot on or before that date in another file. Only the counts are compared, not which securities; 0 turns the check off.'),
    confirmedFiles: z
      .array(z.string().min(1))
      .default([])
      .describe('File names whose suspect snapshot drop is confirmed as intended: they load.'),
    acknowledgedArchiveFiles: z
      .array(z.number().int().positive())
      .default([])
      .describe('file_ids whose archived copy operations no longer vouch for (its finding dealt with): the finding closes at the next audit and the file is not audited again.'),
    maxExpandedMB: z
      .number()
      .positive()
      .default(512)
      .describe('A compressed delivery expanding past this many megabytes is refused while it is read.'),
  })
  .strict()
  .refine((i) => i.minMagnitude < i.maxMagnitude, { message: 'minMagnitude must be below maxMagnitude', path: ['minMagnitude'] });

export const configSchema = z
  .object({
    $schema: z.string().optional(),
    inbox: z.string().default('inbox').describe('The holdings folder that is watched.'),
    archive: z.string().default('archive').describe('Ingested files are moved here, in dated subfolders.'),
    quarantine: z.string().default('quarantine').describe('Rejected files are moved here with a reason file.'),
    database: z.string().default('riskfold.duckdb').describe('The DuckDB file the worker writes.'),
    readCopy: z
      .string()
      .optional()
      .describe('Read-only copy published after each committed run; default: <database>.read.duckdb.'),
    baseCurrency: currencyCode.default('USD').describe('ISO 4217 code values are reported in; other currencies need fx rates.'),
    sources: z
      .array(sourceSchema)
      .default([])
      .describe(
        'How file names map to kinds and how each sender\'s columns map to the canonical layout. These come before the default sources (prices*.csv*, positions*.csv*, fx*.csv*, securities*.csv*, benchmarks*.csv*), so they win where patterns overlap.',
      ),
    replaceDefaultSources: z
      .boolean()
      .default(false)
      .describe('true: only the sources listed here are used, the default ones are dropped.'),
    watch: z
      .object({
        stableMs: z.number().int().min(0).default(1000).describe('A file counts as written once its size holds this long.'),
        pollMs: z.number().int().positive().default(100).describe('How often a growing file\'s size is checked.'),
        settleMs: z
          .number()
          .int()
          .min(0)
          .default(2000)
          .describe('Files landing within this long of each other form one batch (one run): it starts this long after the last arrival.'),
        wholeDaySettleMs: z
          .number()
          .int()
          .min(0)
          .default(300)
          .describe(
            'Once a batch holds a file of every kind in schedule.missingData.expect, it starts this long after the last arrival instead of settleMs (a few watcher polls, to catch the rest of the same delivery).',
          ),
        maxBatchWaitMs: z
          .number()
          .int()
          .positive()
          .default(30_000)
          .describe('A batch starts at the latest this long after its first arrival, however files keep trickling in.'),
        publishRetryMs: z
          .number()
          .int()
          .positive()
          .default(60_000)
          .describe('After a read copy the disk had no room for, the worker tries again this often (and with every batch).'),
      })
      .strict()
      .refine((w) => w.settleMs <= w.maxBatchWaitMs, { message: 'settleMs must not exceed maxBatchWaitMs', path: ['settleMs'] })
      .default({ stableMs: 1000, pollMs: 100, settleMs: 2000, wholeDaySettleMs: 300, maxBatchWaitMs: 30_000, publishRetryMs: 60_000 }),
    ingest: ingestSchema.default(ingestSchema.parse({})),
    risk: riskSchema.default(riskSchema.parse({})),
    benchmarks: z
      .record(z.string().min(1), z.string().min(1))
      .default({})
      .describe(
        'Portfolio id (or "*" for every portfolio) -> the benchmark_id of the benchmarks files it is measured against; a specific id overrides "*". Without one a portfolio has no tracking error.',
      ),
    limits: z.array(limitSchema).default([]).describe('Mandate limits; an episode alerts once when opened, escalated and closed.'),
    alerts: alertsSchema.default({ maxAgeDays: 5 }),
    checks: checksSchema.default(checksSchema.parse({})).describe('Checks of delivered data before it enters risk.'),
    schedule: scheduleSchema.default(scheduleSchema.parse({})),
    stress: stressSchema.default({ scenarios: [] }),
    engine: engineSchema.default(ENGINE_DEFAULTS),
    history: historySchema.default({ keepDays: null }),
  })
  .strict()
  .superRefine((cfg, ctx) => {
    if (cfg.replaceDefaultSources && cfg.sources.length === 0) {
      ctx.addIssue({ code: 'custom', path: ['sources'], message: 'replaceDefaultSources is true but no sources are listed: no file could be read' });
    }
    const limitKeys = new Set<string>();
    cfg.limits.forEach((limit, i) => {
      const key = [limit.portfolio, limit.metric, limit.method ?? '', limit.window, limit.estimator].join('|');
      if (limitKeys.has(key)) {
        ctx.addIssue({
          code: 'custom',
          path: ['limits', i],
          message: `a second limit for portfolio ${limit.portfolio}, ${limit.metric}${limit.method ? ` ${limit.method}` : ''}, window ${limit.window}, ${limit.estimator}`,
        });
      }
      limitKeys.add(key);
      if (limit.method !== undefined && limit.metric !== 'backtest_zone') {
        ctx.addIssue({ code: 'custom', path: ['limits', i, 'method'], message: `"method" applies to backtest_zone limits only, not ${limit.metric}` });
        return;
      }
      if (limit.limit === undefined && limit.metric !== 'backtest_zone') {
        ctx.addIssue({ code: 'custom', path: ['limits', i, 'limit'], message: `a ${limit.metric} limit needs "limit"` });
        return;
      }
      if (limit.metric !== 'backtest_zone') {
        // a fraction, so 15 meant as 15% is refused with the likely fix
        for (const field of ['limit', 'warning', 'clear'] as const) {
          const value = limit[field];
          if (value !== undefined && value > 1) {
            ctx.addIssue({
              code: 'custom',
              path: ['limits', i, field],
              message: `${value} is above 1, but levels are fractions (0.15 = 15%); did you mean ${value / 100}?`,
            });
          }
        }
      }
      const { limit: level, warning, clear } = limitLevels(limit);
      if (!(clear < warning && warning <= level)) {
        ctx.addIssue({
          code: 'custom',
          path: ['limits', i],
          message: `needs clear < warning <= limit, got clear ${clear}, warning ${warning}, limit ${level}`,
        });
      }
      if (limit.metric === 'tracking_error_ex_ante') checkBenchmarkFor(limit, cfg.benchmarks, i, ctx);
      if (limit.method === 'historical' || limit.method === 'filtered_historical') checkScenarioWindow(limit, cfg.risk.historical.days, i, ctx);
      else checkWindow(limit, cfg.risk, i, ctx);
    });
    cfg.risk.shrunk.windows.forEach((w, i) => {
      if (!cfg.risk.windows.includes(w)) {
        ctx.addIssue({
          code: 'custom',
          path: ['risk', 'shrunk', 'windows', i],
          message: `window ${w} is not in risk.windows (${cfg.risk.windows.join(', ')}): the shrunk estimate shrinks a window's sample covariance`,
        });
      }
    });
    checkStressScenarios(cfg.stress.scenarios, cfg.baseCurrency, ctx);
    checkSchedule(cfg.schedule, ctx);
  });

/**
 * The schedule's cron expressions and time zone, checked when the config is read: a typo
 * found only when `watch` starts its schedules comes after it has caught up on the inbox.
 */
function checkSchedule(schedule: z.infer<typeof scheduleSchema>, ctx: z.RefinementCtx): void {
  const crons: [string[], string][] = [
    [['schedule', 'missingData', 'cron'], schedule.missingData.cron],
    [['schedule', 'retryAlerts'], schedule.retryAlerts],
    [['schedule', 'checkpoint'], schedule.checkpoint],
    [['schedule', 'archiveAudit'], schedule.archiveAudit],
  ];
  for (const [path, expression] of crons) {
    if (!cron.validate(expression)) {
      ctx.addIssue({ code: 'custom', path, message: `"${expression}" is not a cron expression (minute hour day-of-month month day-of-week, e.g. "0 22 * * 1-5")` });
    }
  }
  try {
    new Intl.DateTimeFormat('en-US', { timeZone: schedule.timezone });
  } catch {
    ctx.addIssue({ code: 'custom', path: ['schedule', 'timezone'], message: `"${schedule.timezone}" is not an IANA time zone (e.g. "Europe/London")` });
  }
}

/** A limit's window and estimator name an estimate of risk_daily. */
function checkWindow(limit: LimitConfig, risk: { windows: number[]; shrunk: { windows: number[] } }, i: number, ctx: z.RefinementCtx): void {
  const watched = limit.estimator === 'shrunk' ? { list: risk.shrunk.windows, name: 'risk.shrunk.windows' } : { list: risk.windows, name: 'risk.windows' };
  if (limit.estimator === 'ewma' ? limit.window !== 0 : !watched.list.includes(limit.window)) {
    ctx.addIssue({
      code: 'custom',
      path: ['limits', i, 'window'],
      message: limit.estimator === 'ewma' ? 'an ewma limit has window 0' : `window ${limit.window} is not in ${watched.name} (${watched.list.join(', ') || 'none'})`,
    });
  }
}

/** A tracking error limit watches nothing without a benchmark for its portfolio ("*": for any). */
function checkBenchmarkFor(limit: LimitConfig, benchmarks: Record<string, string>, i: number, ctx: z.RefinementCtx): void {
  const covered = limit.portfolio === '*' ? Object.keys(benchmarks).length > 0 : limit.portfolio in benchmarks || '*' in benchmarks;
  if (covered) return;
  ctx.addIssue({
    code: 'custom',
    path: ['limits', i, 'metric'],
    message: `a tracking_error_ex_ante limit needs a benchmark: set "benchmarks": { "${limit.portfolio}": "<benchmark_id>" } (the tracking error is blank without one)`,
  });
}

/** A backtest_zone limit on a historical method: its window is the scenario days; the method has no covariance estimator. */
function checkScenarioWindow(limit: LimitConfig, days: readonly number[], i: number, ctx: z.RefinementCtx): void {
  if (!days.includes(limit.window)) {
    ctx.addIssue({
      code: 'custom',
      path: ['limits', i, 'window'],
      message: `window ${limit.window} is not in risk.historical.days (${days.join(', ')}): a ${limit.method} limit's window is its scenario days`,
    });
  }
  if (limit.estimator !== 'sample') {
    ctx.addIssue({ code: 'custom', path: ['limits', i, 'estimator'], message: `a ${limit.method} VaR has no covariance estimator: leave "estimator" out` });
  }
}

/** A limit's levels with their defaults (backtest_zone: the Basel zone boundaries). */
export function limitLevels(limit: Pick<LimitConfig, 'metric' | 'limit' | 'warning' | 'clear'>): { limit: number; warning: number; clear: number } {
  if (limit.metric === 'backtest_zone') {
    return {
      limit: limit.limit ?? BACKTEST_ZONE_LEVELS.limit,
      warning: limit.warning ?? BACKTEST_ZONE_LEVELS.warning,
      clear: limit.clear ?? BACKTEST_ZONE_LEVELS.clear,
    };
  }
  const level = limit.limit as number;
  return { limit: level, warning: limit.warning ?? 0.9 * level, clear: limit.clear ?? 0.85 * level };
}

export type ConfigInput = z.input<typeof configSchema>;
export type ParsedConfig = z.infer<typeof configSchema>;
export type LimitConfig = ParsedConfig['limits'][number];
