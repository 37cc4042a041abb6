import { afterEach, describe, expect, it } from 'vitest';
import { describeOutcome } from '../../src/cli/actions/ingest.ts';
import { ingestFile } from '../../src/ingest/ingestFile.ts';
import { writeCsv } from '../helpers/files.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';

describe('a positions file naming a security that was never priced', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  it('is loaded, and says so in the ingest line and the log', async () => {
    ws = await tempWorkspace();
    const { db, config, log } = ws;
    await ingestFile(db, config, log, writeCsv(config.inbox, 'prices_0409.csv', [['date', 'security_id', 'price'], ['2026-04-09', 'EQ-NORDWIND', '10']]));
    const outcome = await ingestFile(
      db,
      config,
      log,
      writeCsv(config.inbox, 'positions_0409.csv', [
        ['date', 'portfolio_id', 'security_id', 'quantity'],
        ['2026-04-09', 'acct-growth', 'EQ-NORDWIND', '100'],
        ['2026-04-09', 'acct-growth', 'EQ-TARNWICK', '40'],
        ['2026-04-09', 'acct-growth', 'EQ-ZERO', '0'],
        ['2026-04-09', 'acct-growth', 'CASH:EUR', '500'],
      ]),
    );
    expect(outcome).toMatchObject({ status: 'ingested', rows: 4, neverPriced: ['EQ-TARNWICK'] });
    expect(describeOutcome(outcome)).toMatch(
      /^ingested {3}positions_0409\.csv: 4 rows of positions; never priced: EQ-TARNWICK \(their portfolios have no value until a price arrives\) -> /,
    );
    const warned = ws.logLines().filter((l) => l.level === 40 && l.file === 'positions_0409.csv');
    expect(warned.map((l) => l.securities)).toEqual([['EQ-TARNWICK']]);
  });
});
