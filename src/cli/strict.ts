import type { RunSummary } from '../batch/runRecompute.ts';
import { RiskfoldError } from '../errors.ts';

/**
 * What `--strict` (ingest, recompute) turns into a non-zero exit, for scheduled scripts:
 * rejected files, files held in the inbox (not loaded: still being written, waiting for
 * their marker or manifest, a suspect snapshot), and portfolios the run could not compute
 * (their figures are those of their last good run). Null when there is none.
 */
export function strictFailure(files: { rejected: number; held: number; of: number } | null, run: RunSummary | null): RiskfoldError | null {
  const reasons: string[] = [];
  if (files !== null && files.rejected > 0) reasons.push(`${files.rejected} of ${files.of} files rejected`);
  if (files !== null && files.held > 0) reasons.push(`${files.held} of ${files.of} files held in the inbox, not loaded`);
  for (const f of run?.failedPortfolios ?? []) reasons.push(`portfolio ${f.portfolioId} not computed (from ${f.date}): ${f.error}`);
  if (reasons.length === 0) return null;
  const kind = files !== null && files.rejected + files.held > 0 ? 'input_rejected' : 'portfolio_failed';
  return new RiskfoldError(kind, `--strict: ${reasons.join('; ')}`);
}
