import { insertAlert } from '../alerts/outbox.ts';
import type { Database } from '../storage/database.ts';
import { oneLine } from './runRecord.ts';
import type { RunContext, RunWriter } from './runWriters.ts';

/**
 * A portfolio whose risk a run could not compute (computeRun's `failures`) is an
 * incident of its own, while the run writes the other portfolios. Its episode opens
 * with the first finished run that fails it and closes only with a later finished run
 * that covers it (`risk_runs.portfolios` null or naming it) and computes it: a good run
 * of other portfolios leaves it open, so the alerts do not flap. Each state change is
 * one `run_failed` alert for that portfolio, keyed by the episode's first failed run.
 */

export interface FailingPortfolio {
  portfolio_id: string;
  /** The episode's first failed run. */
  since_run: number;
  last_run: number;
  /** The valuation date of the first row that failed in the latest failed run. */
  failed_on: string | null;
  error: string;
}

/**
 * Open episodes, one row per portfolio (narrowed by $1 when not null): its failures
 * since the last finished run that covered it without failing it. Read by the writer
 * below and by `status`.
 */
export const FAILING_PORTFOLIOS_SQL = `
  with failed as (
    select distinct portfolio_id from portfolio_failures where $1::varchar is null or portfolio_id = $1
  ), good as (
    select f.portfolio_id, max(r.run_id) as run_id
    from failed f
    join risk_runs r on r.status = 'done' and (r.portfolios is null or list_contains(r.portfolios, f.portfolio_id))
    where not exists (select 1 from portfolio_failures x where x.run_id = r.run_id and x.portfolio_id = f.portfolio_id)
    group by f.portfolio_id
  )
  select x.portfolio_id, min(x.run_id) as since_run, max(x.run_id) as last_run,
         arg_max(x.failed_on, x.run_id)::varchar as failed_on, arg_max(x.error, x.run_id) as error
  from portfolio_failures x
  join failed f on f.portfolio_id = x.portfolio_id
  left join good g on g.portfolio_id = x.portfolio_id
  where x.run_id > coalesce(g.run_id, 0)
  group by x.portfolio_id
  order by x.portfolio_id`;

export function failingPortfolios(db: Database, portfolio: string | null = null): Promise<FailingPortfolio[]> {
  return db.all<FailingPortfolio>(FAILING_PORTFOLIOS_SQL, [portfolio]);
}

/** A run writer: records the run's failed portfolios, opens their episodes, closes those of portfolios it computed again. */
export const portfolioIncidents: RunWriter = {
  name: 'portfolio_incidents',
  write: async (tx, run) => {
    // read before this run's failures are written: what was open after the runs before it
    const open = new Map((await failingPortfolios(tx)).map((f) => [f.portfolio_id, f]));
    const failedNow = new Set<string>();
    for (const failure of run.risk.failures) {
      const error = oneLine(failure.error);
      failedNow.add(failure.portfolioId);
      await tx.run('insert into portfolio_failures (run_id, portfolio_id, failed_on, error) values ($1, $2, $3::date, $4)', [
        run.runId,
        failure.portfolioId,
        failure.date,
        error,
      ]);
      if (open.has(failure.portfolioId)) continue;
      const text = `portfolio ${failure.portfolioId}: risk not computed by run ${run.runId} (${run.trigger}), its figures stay those of its last good run: ${error}`;
      await tell(tx, run, failure.portfolioId, run.runId, 'open', failure.date, { failed_on: failure.date, error, text });
    }
    for (const [portfolioId, episode] of open) {
      if (failedNow.has(portfolioId) || !(run.portfolios === null || run.portfolios.includes(portfolioId))) continue;
      const text = `portfolio ${portfolioId}: risk computed again by run ${run.runId} (${run.trigger}) after failing since run ${episode.since_run}`;
      await tell(tx, run, portfolioId, episode.since_run, 'closed', null, { failing_since_run: episode.since_run, text });
    }
  },
};

async function tell(
  tx: Database,
  run: RunContext,
  portfolioId: string,
  first: number,
  state: 'open' | 'closed',
  asOf: string | null,
  facts: Record<string, unknown> & { text: string },
): Promise<void> {
  const raised = await insertAlert(tx, {
    alertId: `run-failed-${first}-portfolio-${portfolioId}-${state}`,
    kind: 'run_failed',
    portfolioId,
    asOf,
    runId: run.runId,
    payload: { level: 'breach', episode_state: state, run_id: run.runId, portfolio_id: portfolioId, trigger: run.trigger, ...facts },
  });
  if (raised) run.alertsRaised++;
}
