import { afterEach, describe, expect, it } from 'vitest';
import { checkLimits } from '../../src/limits/checkLimits.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';
import { businessDays } from '../../src/demo/market.ts';
import { alertRows, breachRows, writeRiskSeries } from './riskRows.ts';

/** A day-by-day volatility path around a 15% limit (warning 13.5%, clear 12.75%). */
function path(values: number[], start = '2026-03-02'): [string, number][] {
  return businessDays(start, values.length).map((d, i) => [d, values[i]]);
}

describe('checkLimits over corrections and history loads', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  async function run(points: [string, number | null][], from: string | null, runId: number, portfolioId = 'acct-growth') {
    const { db, config, log } = ws!;
    return db.transaction(async () => {
      await writeRiskSeries(db, { portfolioId, runId, points });
      return checkLimits(db, config, log, { runId, from, portfolios: [portfolioId] });
    });
  }

  it('retracts an alerted breach that corrected data no longer show, without a second opening alert', async () => {
    ws = await tempWorkspace();
    const days = path([0.1, 0.11, 0.16, 0.17, 0.16]);
    for (const [i, p] of days.entries()) await run([p], p[0], i + 1);
    const [before] = await breachRows(ws.db);
    expect(before).toMatchObject({ opened_on: days[2][0], retracted: false });

    // a corrected price file from the third date: volatility stays low after all
    const corrected = path([0.1, 0.11, 0.11, 0.112, 0.109]).slice(2);
    const outcome = await run(corrected, corrected[0][0], 10);

    expect(outcome).toEqual({ alertsRaised: 1, openEpisodes: 0 });
    const [after] = await breachRows(ws.db);
    expect(after).toMatchObject({ breach_id: before.breach_id, retracted: true });
    const alerts = await alertRows(ws.db);
    expect(alerts.map((a) => a.kind)).toEqual(['limit_opened', 'limit_retracted']);
    expect(alerts[1].breach_id).toBe(before.breach_id);
    expect(alerts[1].data.text).toBe(
      `acct-growth: the 63-day volatility episode recorded from ${days[2][0]} is withdrawn; corrected data no longer show it`,
    );
  });

  it('keeps the breach_id of an episode a correction only reshapes, updating its peak and closing', async () => {
    ws = await tempWorkspace();
    const days = path([0.1, 0.16, 0.17, 0.12, 0.1]);
    for (const [i, p] of days.entries()) await run([p], p[0], i + 1);
    const [before] = await breachRows(ws.db);
    expect(before).toMatchObject({ closed_on: days[3][0], peak_value: 0.17 });

    // corrected from the third date: a higher peak and a later closing
    const corrected = path([0.1, 0.16, 0.19, 0.14, 0.1]).slice(2);
    await run(corrected, corrected[0][0], 10);

    const [after] = await breachRows(ws.db);
    expect(after).toMatchObject({ breach_id: before.breach_id, peak_value: 0.19, closed_on: days[4][0], retracted: false });
    // each transition is alerted once per episode: the moved closing is recorded, not alerted again
    const alerts = await alertRows(ws.db);
    expect(alerts.map((a) => [a.kind, a.as_of])).toEqual([
      ['limit_opened', days[1][0]],
      ['limit_closed', days[3][0]],
    ]);
  });

  it('continues an episode open at `from` and leaves episodes closed before it untouched', async () => {
    ws = await tempWorkspace();
    const history = path([0.16, 0.1, 0.1, 0.14, 0.16, 0.16]);
    await run(history, null, 1);
    const before = await breachRows(ws.db);
    expect(before.map((b) => [b.opened_on, b.closed_on])).toEqual([
      [history[0][0], history[1][0]],
      [history[3][0], null],
    ]);
    const [next] = path([0.1], '2026-03-10');
    const outcome = await run([next], next[0], 2);
    const after = await breachRows(ws.db);
    expect(after[0]).toEqual(before[0]);
    expect(after[1]).toMatchObject({ breach_id: before[1].breach_id, opened_on: history[3][0], level: 'breach', closed_on: next[0] });
    expect(outcome.openEpisodes).toBe(0);
  });

  it('finds an episode open since before `from` that no run had recorded (a limit added later)', async () => {
    ws = await tempWorkspace();
    const history = path([0.1, 0.16, 0.17, 0.14, 0.13]);
    await ws.db.transaction(() => writeRiskSeries(ws!.db, { portfolioId: 'acct-growth', points: history }));
    const [today] = path([0.13], '2026-03-09');
    const outcome = await run([today], today[0], 2);
    expect((await breachRows(ws.db)).map((b) => [b.opened_on, b.closed_on, b.peak_value])).toEqual([[history[1][0], null, 0.17]]);
    expect(outcome).toEqual({ alertsRaised: 1, openEpisodes: 1 });
    expect((await alertRows(ws.db)).map((a) => [a.kind, a.as_of, a.data.level, a.data.episode_state])).toEqual([['limit_state', today[0], 'breach', 'open']]);
  });

  it('replays from the last quiet day before `from`, however far back: an episode open for 60 business days, a limit added since', async () => {
    ws = await tempWorkspace();
    // quiet (below the 12.75% clear level) long ago, then above it for 60 days: no quiet day in the month before `from`
    const days = path([0.1, 0.12, 0.14, 0.16, ...Array(57).fill(0.13), 0.131, 0.13, 0.1, 0.14]);
    const [history, [today, quiet, next]] = [days.slice(0, -3), days.slice(-3)];
    await ws.db.transaction(() => writeRiskSeries(ws!.db, { portfolioId: 'acct-growth', points: history }));
    await run([today], today[0], 2);
    expect((await breachRows(ws.db)).map((b) => [b.opened_on, b.escalated_on, b.closed_on, b.peak_value])).toEqual([[history[2][0], history[3][0], null, 0.16]]);
    // a quiet day in between, inside the month before the next date: the episode closed there, and the next day replays from it
    await run([quiet], quiet[0], 3);
    await run([next], next[0], 4);
    expect((await breachRows(ws.db)).map((b) => [b.opened_on, b.closed_on])).toEqual([
      [history[2][0], quiet[0]],
      [next[0], null],
    ]);
  });

  it('records every episode of a history load but alerts only recent transitions and a still-open episode, once', async () => {
    // maxAgeDays 5 (the default): transitions more than 5 calendar days before the last date stay quiet
    ws = await tempWorkspace();
    const values = [
      ...[0.1, 0.16, 0.17, 0.1], // an old breach, opened and closed
      ...Array(20).fill(0.1),
      ...[0.14, 0.15, 0.16], // opened at warning, escalated, still open ...
      ...Array(10).fill(0.155), // ... through to the last date
    ];
    const history = path(values);
    const last = history[history.length - 1][0];
    const outcome = await run(history, null, 1);

    expect((await breachRows(ws.db)).map((b) => [b.opened_on, b.closed_on])).toEqual([
      [history[1][0], history[3][0]],
      [history[24][0], null],
    ]);
    const alerts = await alertRows(ws.db);
    expect(alerts.map((a) => [a.kind, a.as_of])).toEqual([['limit_state', last]]);
    expect(alerts[0].data).toMatchObject({ level: 'breach', episode_state: 'open', opened_on: history[24][0], value: 0.155, peak_value: 0.16 });
    expect(alerts[0].data.text).toBe(
      `acct-growth: 63-day volatility 15.5% on ${last}: breach since ${history[25][0]} (episode opened ${history[24][0]}, peak 16.0% on ${history[26][0]}); ` +
        `not alerted before; caught up from a delivery covering ${history.length} business days`,
    );
    expect(outcome).toEqual({ alertsRaised: 1, openEpisodes: 1 });

    // the same load again raises nothing; the next day-by-day closing is alerted
    expect((await run(history, null, 2)).alertsRaised).toBe(0);
    const next: [string, number] = [businessDays(last, 2)[1], 0.12];
    expect((await run([next], next[0], 3)).alertsRaised).toBe(1);
    expect((await alertRows(ws.db)).map((a) => a.kind)).toEqual(['limit_state', 'limit_closed']);
  });

  it('alerts a transition inside maxAgeDays of a history load, and then no late opening', async () => {
    ws = await tempWorkspace({ alerts: { file: 'alerts.jsonl', maxAgeDays: 3 } });
    const history = path([...Array(10).fill(0.1), 0.16, 0.16, 0.16]);
    await run(history, null, 1);
    // Mon 2026-03-16 opening, last date Wed 03-18: within 3 calendar days
    expect((await alertRows(ws.db)).map((a) => [a.kind, a.as_of])).toEqual([['limit_opened', history[10][0]]]);
  });

  it('retracts quietly an episode that was never alerted', async () => {
    ws = await tempWorkspace({ alerts: { file: 'alerts.jsonl', maxAgeDays: 0 } });
    const history = path([0.16, 0.1, ...Array(8).fill(0.1)]);
    await run(history, null, 1);
    expect(await alertRows(ws.db)).toEqual([]);
    await run([[history[0][0], 0.1]], null, 2);
    expect((await breachRows(ws.db)).map((b) => b.retracted)).toEqual([true]);
    expect(await alertRows(ws.db)).toEqual([]);
  });

  it('brings operations up to date once when a catch-up of 21 business days hides an escalation past maxAgeDays', async () => {
    ws = await tempWorkspace();
    const [first] = path([0.14]);
    await run([first], first[0], 1);
    // 21 dates at once: the escalation on the 2nd of them is weeks before the last one
    const burst = path([0.14, ...Array(20).fill(0.16)], businessDays(first[0], 2)[1]);
    const outcome = await run(burst, burst[0][0], 2);
    const alerts = await alertRows(ws.db);
    expect(alerts.map((a) => [a.kind, a.as_of, a.data.level, a.data.episode_state])).toEqual([
      ['limit_opened', first[0], 'warning', 'open'],
      ['limit_state', burst[20][0], 'breach', 'open'],
    ]);
    expect(alerts[1].data.text).toBe(
      `acct-growth: 63-day volatility 16.0% on ${burst[20][0]}: breach since ${burst[1][0]} (episode opened ${first[0]}, peak 16.0% on ${burst[1][0]}); ` +
        `last told: warning since ${first[0]}; caught up from a delivery covering 21 business days`,
    );
    expect(outcome.alertsRaised).toBe(1);
    // told once: the same delivery again raises nothing
    expect((await run(burst, burst[0][0], 3)).alertsRaised).toBe(0);
  });

  it('alerts a correction that moves an alerted opening, and one that reopens a closed episode', async () => {
    ws = await tempWorkspace({ alerts: { file: 'alerts.jsonl', maxAgeDays: 0 } });
    const days = path([0.1, 0.1, 0.14, 0.1]);
    for (const [i, p] of days.entries()) await run([p], p[0], i + 1);
    expect((await alertRows(ws.db)).map((a) => a.kind)).toEqual(['limit_opened', 'limit_closed']);
    // the second date is corrected up (opening moves a day earlier) and the last one too (no closing)
    await run([[days[1][0], 0.14], [days[3][0], 0.14]], days[1][0], 10);
    const alerts = await alertRows(ws.db);
    expect(alerts.map((a) => [a.kind, a.data.level, a.data.episode_state, a.data.opened_on])).toEqual([
      ['limit_opened', 'warning', 'open', days[2][0]],
      ['limit_closed', 'closed', 'closed', days[2][0]],
      ['limit_state', 'warning', 'open', days[1][0]],
    ]);
  });
});
