import { afterEach, describe, expect, it } from 'vitest';
import { runBatch } from '../../src/batch/runBatch.ts';
import { businessDays } from '../../src/demo/market.ts';
import { writeCsv } from '../helpers/files.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';

/** Invented prices; maxStaleDays 5 (the default): a price carries over at most 5 valuation dates. */
const DAYS = businessDays('2026-04-01', 10);

describe('portfolio_unvalued alerts', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  async function deliver(name: string, rows: (string | number)[][]) {
    const { db, config, log } = ws!;
    const summary = await runBatch(db, config, log, [writeCsv(config.inbox, name, rows)]);
    expect(summary.runError).toBeNull();
  }
  const alerts = () =>
    ws!.db.all<{ alert_id: string; as_of: string; level: string; state: string; text: string }>(
      `select alert_id, as_of::varchar as as_of, payload->>'level' as level, payload->>'episode_state' as state, payload->>'text' as text
       from alerts where kind = 'portfolio_unvalued' order by created_at, alert_id`,
    );

  it('alerts once when a holding loses its price (naming it, since when, its last share) and once when it is valued again', async () => {
    ws = await tempWorkspace({ risk: { windows: [2], tradingDaysPerYear: 252 }, limits: [] });
    await deliver('positions_0401.csv', [
      ['date', 'portfolio_id', 'security_id', 'quantity'],
      [DAYS[0], 'acct-growth', 'EQ-NORDWIND', 300],
      [DAYS[0], 'acct-growth', 'EQ-TARNWICK', 100],
    ]);
    const prices = [['date', 'security_id', 'price'], ...DAYS.map((d, i) => [d, 'EQ-NORDWIND', 10 + i * 0.1]), ...DAYS.slice(0, 3).map((d) => [d, 'EQ-TARNWICK', 10])];
    await deliver('prices_0401.csv', prices);
    // EQ-TARNWICK's last price (day 3) carries to day 8; from day 9 the portfolio has no value
    const [opened] = await alerts();
    const share = 1000 / (300 * (10 + 7 * 0.1) + 1000);
    expect(opened).toMatchObject({ as_of: DAYS[9], level: 'unvalued', state: 'open' });
    expect(opened.text).toBe(
      `acct-growth has no value since ${DAYS[8]}: no price for EQ-TARNWICK (last ${(share * 100).toFixed(1)}% of value on ${DAYS[7]}); its risk figures are blank until it can be valued`,
    );

    // another day without a price for it: still the same problem, no second alert
    await deliver('prices_0415.csv', [['date', 'security_id', 'price'], [businessDays(DAYS[9], 2)[1], 'EQ-NORDWIND', 11.1]]);
    expect(await alerts()).toHaveLength(1);

    await deliver('prices_0415b.csv', [['date', 'security_id', 'price'], [businessDays(DAYS[9], 2)[1], 'EQ-TARNWICK', 9.5]]);
    const [, cleared] = await alerts();
    expect(cleared).toMatchObject({ level: 'valued', state: 'closed', as_of: businessDays(DAYS[9], 2)[1] });
    expect(await ws.db.all('select * from data_alert_state')).toEqual([]);
  });

  it('names a holding that never had a price', async () => {
    ws = await tempWorkspace({ risk: { windows: [2], tradingDaysPerYear: 252 }, limits: [] });
    await deliver('prices_0401.csv', [['date', 'security_id', 'price'], ...DAYS.slice(0, 3).map((d) => [d, 'EQ-NORDWIND', 10])]);
    await deliver('positions_0401.csv', [
      ['date', 'portfolio_id', 'security_id', 'quantity'],
      [DAYS[0], 'acct-income', 'EQ-NORDWIND', 300],
      [DAYS[0], 'acct-income', 'EQ-NEVERSEEN', 5],
    ]);
    const [opened] = await alerts();
    expect(opened.text).toBe(`acct-income has no value since ${DAYS[0]}: no price for EQ-NEVERSEEN (never valued); its risk figures are blank until it can be valued`);
  });
});
