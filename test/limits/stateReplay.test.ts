import { afterEach, describe, expect, it } from 'vitest';
import { checkLimits } from '../../src/limits/checkLimits.ts';
import { replayEpisodes } from '../../src/limits/episodes.ts';
import { businessDays } from '../../src/demo/market.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';
import { alertRows, writeRiskSeries } from './riskRows.ts';

/**
 * A long replay of how deliveries really arrive: day-by-day drops, catch-up bursts of
 * several weeks, corrections that raise or lower past figures, and gaps (dates without a
 * figure, e.g. a missing price). After every batch, every episode operations were ever
 * told of, and every open one, must have as its last alert one that describes its
 * current state (level, open or closed, opening date). The paths are invented test data.
 */

const PORTFOLIO = 'acct-growth';
/** Three limits, one per kind of series a limit can watch. */
const LIMITS = [
  { portfolio: '*', window: 63, limit: 0.15 },
  { portfolio: '*', window: 0, estimator: 'ewma' as const, limit: 0.15 },
  { portfolio: '*', window: 63, metric: 'var_99_1d' as const, limit: 0.02 },
];

/** Park-Miller minimal standard generator: a fixed seed gives the same replay every time. */
function random(seed: number): () => number {
  let state = seed;
  return () => (state = (state * 16807) % 2147483647) / 2147483647;
}

interface Truth {
  sample: Map<string, number | null>;
  ewma: Map<string, number | null>;
  /** 1-day 99% VaR as a fraction of value. */
  varFraction: Map<string, number | null>;
}

type Batch = { kind: 'daily' | 'burst' | 'gap' | 'correction'; dates: string[] };

describe('limit state after every batch of a long replay', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  it('leaves, for every episode, a last alert that describes its current state', async () => {
    ws = await tempWorkspace({ limits: LIMITS });
    const { db, config, log } = ws;
    const next = random(20261202);
    const calendar = businessDays('2026-01-05', 400);
    const truth: Truth = { sample: new Map(), ewma: new Map(), varFraction: new Map() };
    // mean-reverting walks around the limits, so episodes open, escalate and close often
    let walk = { sample: 0.12, ewma: 0.12, varFraction: 0.016 };
    const step = (v: number, centre: number, size: number) => v + 0.15 * (centre - v) + (next() - 0.5) * size;

    let delivered = 0;
    const batches: Batch[] = [];
    const kinds = new Set<Batch['kind']>();
    for (let runId = 1; delivered < calendar.length - 30; runId++) {
      const pick = next();
      let batch: Batch;
      if (pick < 0.55 || delivered < 5) batch = { kind: 'daily', dates: calendar.slice(delivered, delivered + 1) };
      else if (pick < 0.7) batch = { kind: 'burst', dates: calendar.slice(delivered, delivered + 10 + Math.floor(next() * 16)) };
      else if (pick < 0.8) batch = { kind: 'gap', dates: calendar.slice(delivered, delivered + 1 + Math.floor(next() * 3)) };
      else {
        const start = Math.max(0, delivered - 5 - Math.floor(next() * 30));
        batch = { kind: 'correction', dates: calendar.slice(start, start + 3 + Math.floor(next() * 12)).filter((d) => d < calendar[delivered]) };
      }
      kinds.add(batch.kind);
      const shift = (next() - 0.5) * 0.06;
      for (const date of batch.dates) {
        if (batch.kind === 'correction') {
          // a corrected price moves every figure of those dates the same way, up or down
          for (const [series, scale] of [['sample', 1], ['ewma', 1], ['varFraction', 0.13]] as const) {
            const old = truth[series].get(date) ?? walk[series];
            truth[series].set(date, Math.max(0.01 * scale, old + shift * scale));
          }
          continue;
        }
        walk = { sample: step(walk.sample, 0.135, 0.03), ewma: step(walk.ewma, 0.135, 0.025), varFraction: step(walk.varFraction, 0.018, 0.004) };
        for (const series of ['sample', 'ewma', 'varFraction'] as const) truth[series].set(date, batch.kind === 'gap' ? null : walk[series]);
      }
      if (batch.kind !== 'correction') delivered += batch.dates.length;
      if (batch.dates.length === 0) continue;
      batches.push(batch);

      const from = batch.dates[0];
      await db.transaction(async () => {
        const points = (s: Map<string, number | null>) => batch.dates.map((d) => [d, s.get(d) ?? null] as [string, number | null]);
        await writeRiskSeries(db, { portfolioId: PORTFOLIO, runId, points: points(truth.sample), varFraction: (d) => truth.varFraction.get(d) ?? null });
        await writeRiskSeries(db, { portfolioId: PORTFOLIO, runId, estimator: 'ewma', window: 0, points: points(truth.ewma) });
        await checkLimits(db, config, log, { runId, from, portfolios: [PORTFOLIO] });
      });
      await expectToldStateCurrent(ws, truth, calendar.slice(0, delivered), `batch ${runId} (${batch.kind} from ${from})`);
    }
    // the replay exercised every kind of delivery, and episodes of every kind of series
    expect([...kinds].sort()).toEqual(['burst', 'correction', 'daily', 'gap']);
    const alerts = await alertRows(db);
    expect(new Set(alerts.map((a) => a.kind))).toEqual(new Set(['limit_opened', 'limit_escalated', 'limit_closed', 'limit_state', 'limit_retracted']));
  }, 60_000);
});

/**
 * The check after one batch. The episodes recorded are those a fresh replay of the truth
 * gives (the state machine, run over the whole history); for each of them that is open,
 * or that operations were told of, the last alert carries its current state.
 */
async function expectToldStateCurrent(ws: TempWorkspace, truth: Truth, dates: string[], when: string): Promise<void> {
  const episodes = await ws.db.all<{
    breach_id: number;
    metric: string;
    estimator: string;
    level: string;
    opened_on: string;
    closed_on: string | null;
    retracted: boolean;
    limit_value: number;
    warning_value: number;
    clear_value: number;
  }>(
    `select breach_id, metric, estimator, level, opened_on::varchar as opened_on, closed_on::varchar as closed_on, retracted,
       limit_value, warning_value, clear_value
     from limit_breaches order by breach_id`,
  );
  const alerts = await ws.db.all<{ breach_id: number; kind: string; payload: string }>(
    // within a run, an episode's alerts go in date order and a limit_state one comes last
    `select breach_id, kind, payload::varchar as payload from alerts where breach_id is not null
     order by run_id, as_of, kind = 'limit_state', alert_id`,
  );
  const last = new Map(alerts.map((a) => [a.breach_id, { kind: a.kind, ...(JSON.parse(a.payload) as { level: string; episode_state: string; opened_on: string }) }]));

  for (const [metric, estimator, series] of [
    ['vol_ex_ante', 'sample', truth.sample],
    ['vol_ex_ante', 'ewma', truth.ewma],
    ['var_99_1d', 'sample', truth.varFraction],
  ] as const) {
    const recorded = episodes.filter((e) => e.metric === metric && e.estimator === estimator);
    if (recorded.length === 0) continue;
    const { limit_value: limit, warning_value: warning, clear_value: clear } = recorded[0];
    const expected = replayEpisodes(
      dates.map((date) => ({ date, value: series.get(date) ?? null })),
      { limit, warning, clear },
    );
    const live = recorded.filter((e) => !e.retracted).sort((a, b) => a.opened_on.localeCompare(b.opened_on));
    expect(live.map((e) => [e.opened_on, e.level, e.closed_on]), `${when}: ${metric} ${estimator} episodes`).toEqual(
      expected.map((e) => [e.openedOn, e.level, e.closedOn]),
    );
  }

  for (const e of episodes) {
    const told = last.get(e.breach_id);
    const where = `${when}: episode ${e.breach_id} (${e.metric} ${e.estimator} from ${e.opened_on})`;
    if (e.retracted) {
      if (told !== undefined) expect(told.kind, where).toBe('limit_retracted');
      continue;
    }
    if (told === undefined) {
      // never told: allowed only for an episode that was over before operations could act on it
      expect(e.closed_on, where).not.toBeNull();
      continue;
    }
    const open = e.closed_on === null;
    expect({ level: told.level, episode_state: told.episode_state, opened_on: told.opened_on }, where).toEqual({
      level: open ? e.level : 'closed',
      episode_state: open ? 'open' : 'closed',
      opened_on: e.opened_on,
    });
  }
}
