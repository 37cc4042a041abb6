/**
 * The steps of a delivery's life (and of its run) at which a kill can land. Tests set RISKFOLD_FAULT to
 * one of them to make the process kill itself (SIGKILL: no cleanup, no finally) exactly
 * there, then restart it and check the ledger; without the variable this does nothing.
 */
export type FaultStep =
  /** The load transaction committed; the file is still in the inbox. */
  | 'committed'
  /** A rejected or duplicate file's ledger row is written; the file is still in the inbox. */
  | 'recorded'
  /** The file is linked into archive/ or quarantine/ and still linked in the inbox. */
  | 'linked'
  /** The file has left the inbox; the bookkeeping after the move is not done. */
  | 'moved'
  /** The temporary read copy is written and not yet renamed into place. */
  | 'copied'
  /** A run's replaced rows are copied to history; its write transaction is not committed. */
  | 'kept';

export function faultPoint(step: FaultStep): void {
  if (process.env.RISKFOLD_FAULT === step) process.kill(process.pid, 'SIGKILL');
}

/**
 * Tests set RISKFOLD_FAULT_PORTFOLIO to a portfolio id to make computing that portfolio's
 * risk throw, as a bug or a bad holding would, and check that the other portfolios of
 * the run still get theirs; `loss:<id>` makes only its loss figures (src/loss) throw.
 * Without the variable this does nothing. Read once: the check runs for every row of a
 * backfill.
 */
const FAULTY_PORTFOLIO = process.env.RISKFOLD_FAULT_PORTFOLIO;

export function portfolioFault(portfolioId: string, stage: 'risk' | 'loss' = 'risk'): void {
  const wanted = stage === 'risk' ? portfolioId : `${stage}:${portfolioId}`;
  if (FAULTY_PORTFOLIO === wanted) throw new Error(`injected fault for portfolio ${portfolioId}`);
}
