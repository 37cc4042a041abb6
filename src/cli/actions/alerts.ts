import { deliverAlerts } from '../../alerts/deliverAlerts.ts';
import { rearmAlerts } from '../../alerts/rearm.ts';
import { writeRetryRequest } from '../../alerts/retryRequests.ts';
import type { Config } from '../../config/load.ts';
import type { Logger } from '../../log/logger.ts';
import { RiskfoldError } from '../../errors.ts';
import { readTable } from '../../read/readQuery.ts';
import { publishReadCopy } from '../../storage/readCopy.ts';
import { openForReading, openWorkspace } from '../../storage/workspace.ts';
import { contextFrom } from '../context.ts';
import { formatResult, noteReadCopy, parseFormat } from '../format.ts';

/** `riskfold alerts [retry [ID...]]`. */
export async function runAlerts(words: string[], opts: { config?: string; undelivered?: boolean; limit: string; format: string }): Promise<void> {
  const { config, log } = contextFrom(opts);
  if (words.length > 0) {
    if (words[0] !== 'retry') throw new RiskfoldError('usage', `unknown alerts action "${words[0]}"; the one action is "retry [ID...]"`);
    process.stdout.write(`${await retry(config, log, [...new Set(words.slice(1))])}\n`);
    return;
  }
  const format = parseFormat(opts.format);
  const limit = Number(opts.limit);
  if (!Number.isInteger(limit) || limit <= 0) throw new RiskfoldError('usage', `--limit must be a positive whole number, got "${opts.limit}"`);
  const handle = await openForReading(config);
  try {
    noteReadCopy(handle, config);
    const result = await readTable(
      handle.db,
      `select alert_id, kind, portfolio_id, as_of, payload->>'level' as level, payload->>'episode_state' as episode_state,
         created_at, delivered_at, attempts, next_attempt_at, last_error, payload->>'text' as text
       from alerts ${opts.undelivered ? 'where delivered_at is null' : ''}
       order by created_at desc, alert_id desc limit ${limit}`,
    );
    process.stdout.write(result.rows.length === 0 ? 'no alerts\n' : formatResult(result, format));
  } finally {
    handle.db.close();
  }
}

async function retry(config: Config, log: Logger, ids: string[]): Promise<string> {
  let db;
  try {
    db = await openWorkspace(config, log);
  } catch (err) {
    if (!(err instanceof RiskfoldError && err.kind === 'database_locked')) throw err;
    // the worker owns the database: it carries the request out between batches
    const name = writeRetryRequest(config, ids);
    return `the worker holds ${config.database}: retry requested (${name}); "riskfold alerts --undelivered" shows the outcome after its next publish`;
  }
  try {
    const outcome = await rearmAlerts(db, config, ids);
    const summary = outcome.rearmed.length > 0 ? await deliverAlerts(db, config, log) : null;
    const published = await publishReadCopy(db, config, log);
    const lines = [`re-armed ${outcome.rearmed.length} alert${outcome.rearmed.length === 1 ? '' : 's'}${summary ? `: ${summary.delivered} delivered, ${summary.pending} still undelivered` : ''}`];
    if (outcome.notPending.length > 0) lines.push(`not undelivered (unknown or already delivered): ${outcome.notPending.join(', ')}`);
    if (!published.published) lines.push(published.reason);
    return lines.join('\n');
  } finally {
    db.close();
  }
}
