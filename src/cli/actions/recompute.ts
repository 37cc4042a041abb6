import { runBatch } from '../../batch/runBatch.ts';
import { requireIsoDate, type RunSummary } from '../../batch/runRecompute.ts';
import { describeChange } from '../../batch/runSettings.ts';
import { RiskfoldError } from '../../errors.ts';
import { requireKnownPortfolios } from '../../read/portfolios.ts';
import type { Database } from '../../storage/database.ts';
import { openWorkspace } from '../../storage/workspace.ts';
import { contextFrom } from '../context.ts';
import { strictFailure } from '../strict.ts';

interface RecomputeOptions {
  config?: string;
  from?: string;
  portfolio: string[];
  strict?: boolean;
}

/**
 * `riskfold recompute [--from DATE] [--portfolio ID]... [--strict]`: a full backfill
 * without --from; --strict exits non-zero when a portfolio could not be computed.
 */
export async function runRecomputeCommand(opts: RecomputeOptions): Promise<void> {
  if (opts.from !== undefined) requireIsoDate(opts.from);
  const { config, log } = contextFrom(opts);
  const db = await openWorkspace(config, log);
  try {
    const portfolios = opts.portfolio.length > 0 ? [...new Set(opts.portfolio)] : null;
    await requireKnownPortfolios(db, portfolios ?? []);
    if (opts.from !== undefined) await requireFromInHistory(db, opts.from);
    const batch = await runBatch(db, config, log, [], { recompute: { trigger: 'recompute', from: opts.from ?? null, portfolios } });
    for (const change of batch.settingChanges) process.stdout.write(`${describeChange(change)}\n`);
    if (batch.run === null) throw new Error(`recompute failed: ${batch.runError}`);
    process.stdout.write(`${describeRun(batch.run)}\n`);
    if (batch.readCopyBehind !== null) process.stdout.write(`${batch.readCopyBehind}\n`);
    const failure = opts.strict ? strictFailure(null, batch.run) : null;
    if (failure) throw failure;
  } finally {
    db.close();
  }
}

/** A --from after the last valuation date would recompute nothing and print a reversed range: refuse it. */
async function requireFromInHistory(db: Database, from: string): Promise<void> {
  const [{ latest }] = await db.all<{ latest: string | null }>('select max(date)::varchar as latest from align_valuation_dates');
  if (latest === null) throw new RiskfoldError('usage', `--from ${from}: there are no valuation dates yet (no prices of held securities)`);
  if (from > latest) throw new RiskfoldError('usage', `--from ${from} is after the latest valuation date, ${latest}: nothing to recompute`);
}

/**
 * "run 7: 3 portfolios, 2020-01-02 .. 2026-11-30, 12,345 risk rows, 2 alerts, 4.1 s", then
 * one line per portfolio the run could not compute.
 */
export function describeRun(run: RunSummary): string {
  const range = run.to === null ? 'no valuation dates' : `${run.from ?? 'start'} .. ${run.to}`;
  const plural = (n: number, word: string) => `${n.toLocaleString('en-US')} ${word}${n === 1 ? '' : 's'}`;
  const line = `run ${run.runId}: ${plural(run.portfolios, 'portfolio')}, ${range}, ${plural(run.riskRows, 'risk row')}, ${plural(run.alertsRaised, 'alert')}, ${run.seconds.toFixed(1)} s`;
  const failed = run.failedPortfolios.map((f) => `portfolio ${f.portfolioId} not computed (from ${f.date}), its figures are those of its last good run: ${f.error}`);
  return [line, ...failed].join('\n');
}
