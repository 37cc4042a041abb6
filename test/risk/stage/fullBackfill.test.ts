import * as ss from 'simple-statistics';
import { afterEach, describe, expect, it } from 'vitest';
import type { ConfigInput } from '../../../src/config/schema.ts';
import { runRecompute } from '../../../src/batch/runRecompute.ts';
import { tempWorkspace, type TempWorkspace } from '../../helpers/workspace.ts';
import { expectMatchesReference, readDaily } from './compare.ts';
import { referenceRisk, type ReferenceOptions } from './reference.ts';
import { buildScenario, LISTING_DAY, loadDays, LONG_GAP, RISK, STALE_GAP, type Scenario } from './scenario.ts';

const reference = (s: Scenario, weights: ReferenceOptions['weights'] = 'current') =>
  referenceRisk(s, { windows: [21, 63], periodsPerYear: 252, maxStaleDays: 5, minCoverage: 0.9, weights, ewma: { lambda: 0.94, seedDays: 10 } });

describe('recompute: a full backfill', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  async function backfill(risk: ConfigInput['risk'] = RISK): Promise<Scenario> {
    ws = await tempWorkspace({ risk });
    const s = buildScenario();
    await loadDays(ws.db, s, 0, s.dates.length - 1);
    await runRecompute(ws.db, ws.config, ws.log, { trigger: 'test' });
    return s;
  }

  it('matches an independent two-pass computation from the raw rows (simple-statistics) in every risk_daily figure to 1e-10', async () => {
    const s = await backfill();
    const dates = await ws!.db.all<{ date: string }>('select date from align_valuation_dates order by date_index');
    expect(dates.map((d) => d.date)).toEqual(s.dates);
    expectMatchesReference(await readDaily(ws!.db), reference(s), 1e-10);
  });

  it('uses the mean of the daily weights over the window with weights "window_average" (same reference, averaged weights)', async () => {
    const s = await backfill({ ...RISK, weights: 'window_average' });
    const rows = await readDaily(ws!.db);
    expectMatchesReference(rows, reference(s, 'window_average'), 1e-10);
    const current = reference(s, 'current').find((r) => r.portfolio === 'acct-growth' && r.date === s.dates[160] && r.windowDays === 63)!;
    const averaged = rows.find((r) => r.portfolio_id === 'acct-growth' && r.date === s.dates[160] && r.window_days === 63)!;
    expect(Math.abs((averaged.vol_ex_ante as number) - current.volExAnte!)).toBeGreaterThan(1e-6);
  });

  it('says why figures are missing: stale carried prices, unpriced past maxStaleDays, the short history of a new listing', async () => {
    const s = await backfill();
    const status = async (p: string, day: number, w: number) =>
      (await ws!.db.all<{ status: string; coverage: number | null; vol_ex_ante: number | null }>(
        'select status, coverage, vol_ex_ante from risk_daily where portfolio_id = $1 and date = $2::date and window_days = $3',
        [p, s.dates[day], w],
      ))[0];
    // EQ-QUILLON has no delivery for three days: carried, flagged, still computed
    expect(await status('acct-growth', STALE_GAP[0], 21)).toMatchObject({ status: 'stale_prices', coverage: 1 });
    // EQ-FERNHOLT: days 6 and 7 of its gap are past maxStaleDays 5, so acct-income has no value
    expect(await status('acct-income', LONG_GAP[0] + 5, 21)).toMatchObject({ status: 'unpriced', coverage: null, vol_ex_ante: null });
    // ... and its broken history leaves ~8% of the value without a full window afterwards
    const after = await status('acct-income', LONG_GAP[1] + 3, 21);
    expect(after.status).toBe('partial_history');
    expect(after.coverage).toBeGreaterThan(0.9);
    expect(after.coverage).toBeLessThan(1);
    // EQ-LANTERN (listed on day 120, bought on day 150) has 63 returns only from day 183
    const listing = await status('acct-growth', 160, 63);
    expect(listing.status).toBe('partial_history');
    expect(listing.vol_ex_ante).not.toBeNull();
    expect((await status('acct-growth', LISTING_DAY + 63, 63)).status).toBe('ok');
    // too little history at the start: nothing computed, nothing invented
    expect(await status('acct-growth', 30, 63)).toMatchObject({ status: 'insufficient_history', vol_ex_ante: null });
  });

  it('writes security_stats for every security with a full window: exp(A mean) - 1 and sqrt(A var) (simple-statistics)', async () => {
    const s = await backfill();
    const rows = await ws!.db.all<{ date: string; window_days: number; security_id: string; ann_return: number | null; ann_vol: number }>(
      'select date, window_days, security_id, ann_return, ann_vol from security_stats where window_days = 21',
    );
    const returns = await ws!.db.all<{ security_id: string; date_index: number; log_return: number | null }>(
      'select security_id, date_index, log_return from ret_securities',
    );
    const series = new Map<string, (number | null)[]>();
    for (const r of returns) (series.get(r.security_id) ?? series.set(r.security_id, []).get(r.security_id)!)[r.date_index - 1] = r.log_return;
    let expected = 0;
    for (const [id, xs] of series) {
      for (let d = 20; d < s.dates.length; d++) {
        // Array.from, not slice: the series is sparse (no return on the first date) and some() skips holes
        const window = Array.from({ length: 21 }, (_, k) => xs[d - 20 + k]);
        if (window.some((x) => x === null || x === undefined)) continue;
        expected++;
        const row = rows.find((r) => r.security_id === id && r.date === s.dates[d]);
        expect(row, `${id} ${s.dates[d]}`).toBeDefined();
        expect(row!.ann_vol).toBeCloseTo(Math.sqrt(252 * ss.sampleVariance(window as number[])), 12);
        expect(row!.ann_return! / (Math.exp(252 * ss.mean(window as number[])) - 1)).toBeCloseTo(1, 10);
      }
    }
    expect(rows.length).toBe(expected);
  });

  it('keeps contributions for the latest date only; the ccr add up to vol_ex_ante, base cash adds nothing and foreign cash its currency risk (Euler)', async () => {
    const s = await backfill();
    const last = s.dates[s.dates.length - 1];
    const dates = await ws!.db.all<{ date: string }>('select distinct date from risk_contributions');
    expect(dates).toEqual([{ date: last }]);
    const sums = await ws!.db.all<{ portfolio_id: string; window_days: number; vol: number; ccr: number; pct: number }>(
      `select c.portfolio_id, c.window_days, any_value(d.vol_ex_ante) as vol, sum(c.ccr) as ccr, sum(c.pct) as pct
       from risk_contributions c join risk_daily d using (portfolio_id, date, window_days, estimator)
       group by all`,
    );
    expect(sums.length).toBe(2 * 3);
    for (const r of sums) {
      expect(r.ccr / r.vol).toBeCloseTo(1, 12);
      expect(r.pct).toBeCloseTo(1, 12);
    }
    const cash = await ws!.db.all<{ mcr: number }>(`select mcr from risk_contributions where security_id = 'CASH:USD'`);
    expect(cash.length).toBe(3);
    for (const c of cash) expect(c).toMatchObject({ mcr: 0 });
    // CASH:EUR moves with EUR/USD (SPEC §3, round 2): a marginal risk like any holding's
    const euro = await ws!.db.all<{ mcr: number }>(`select mcr from risk_contributions where security_id = 'CASH:EUR'`);
    expect(euro.length).toBe(3);
    for (const c of euro) expect(Math.abs(c.mcr)).toBeGreaterThan(0);
  });
});
