import type { RunSummary } from '../batch/runRecompute.ts';
import { RiskfoldError } from '../errors.ts';

/**
 * What `--strict` (ingest, recompute) turns into a non-zero exit, for scheduled scripts:
 * rejected files, and portfolios the run could not compute (their figures are those of
 * their last good run). Null when there is neither.
 */
export function strictFailure(rejected: { count: number; of: number } | null, run: RunSummary | null): RiskfoldError | null {
  const reasons: string[] = [];
  if (rejected !== null && rejected.count > 0) reasons.push(`${rejected.count} of ${rejected.of} files rejected`);
  for (const f of run?.failedPortfolios ?? []) reasons.push(`portfolio ${f.portfolioId} not computed (from ${f.date}): ${f.error}`);
  if (reasons.length === 0) return null;
  const kind = rejected !== null && rejected.count > 0 ? 'input_rejected' : 'portfolio_failed';
  return new RiskfoldError(kind, `--strict: ${reasons.join('; ')}`);
}
