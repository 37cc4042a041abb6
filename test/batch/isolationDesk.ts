import { writeFileSync } from 'node:fs';
import path from 'node:path';
import { pricesCsv, writeCsv } from '../helpers/files.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';

// An invented desk of three portfolios (acct-a, acct-b, acct-c) on the same two
// securities, every one of them over its (tiny) limit, for the per-portfolio isolation tests.

/** A workspace with the desk's prices and positions in its inbox, not yet ingested. */
export async function deskInInbox(): Promise<TempWorkspace> {
  const ws = await tempWorkspace({ limits: [{ portfolio: '*', window: 63, limit: 0.005 }] });
  writeFileSync(path.join(ws.config.inbox, 'prices_2020.csv'), pricesCsv(70, 2));
  writeCsv(ws.config.inbox, 'positions_2020.csv', [
    ['date', 'portfolio_id', 'security_id', 'quantity'],
    ...['acct-a', 'acct-b', 'acct-c'].flatMap((id, k) => [
      ['2020-01-01', id, 'EQ-NORDWIND', 100 * (k + 1)],
      ['2020-01-01', id, 'EQ-SALTMARSH', 50],
    ]),
  ]);
  ws.closeDb();
  return ws;
}
