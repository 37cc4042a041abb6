import * as ss from 'simple-statistics';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { runRecompute } from '../../../src/batch/runRecompute.ts';
import { tempWorkspace, type TempWorkspace } from '../../helpers/workspace.ts';
import { buildScenario, LISTING_DAY, loadDays, RISK } from './scenario.ts';
import type { VolChangePoint } from '../../../src/report/volChangeData.ts';
import { readStoredInputs, type StoredInputs } from '../../helpers/storedInputs.ts';

/**
 * vol_change from a full backfill of the seeded scenario, against an independent
 * computation: each date's 63- and 21-day sample covariance from the stored log returns
 * with simple-statistics (two-pass, divisor W - 1), each book's weights from
 * value_weights, and the symmetric split of SPEC section 9 written out here
 * (from_weights = 0.5[(s(w1,S0) - s(w0,S0)) + (s(w1,S1) - s(w0,S1))], the rest the
 * market). The per-security part is checked against its definition (trade times
 * marginal risk at the midpoint, averaged over both covariances; the formula in
 * src/risk/math/volChange.ts) and its sum.
 */

/** A vol_change row: the report's point with its keys. */
interface ChangeRow extends VolChangePoint {
  portfolio_id: string;
  window_days: number;
  estimator: string;
}

const A = 252;

describe('vol_change: why ex-ante volatility moved since the previous valuation date', () => {
  let ws: TempWorkspace;
  let rows: ChangeRow[];
  let dates: string[];
  let returns: StoredInputs['returns'];
  let weights: StoredInputs['weights'];
  const riskVol = new Map<string, number | null>();
  const parts = new Map<string, Map<string, { from: number; w0: number; w1: number }>>();

  beforeAll(async () => {
    ws = await tempWorkspace({ risk: { ...RISK, contributions: 'all' } });
    const s = buildScenario();
    dates = s.dates;
    await loadDays(ws.db, s, 0, s.dates.length - 1);
    await runRecompute(ws.db, ws.config, ws.log, { trigger: 'test' });
    rows = await ws.db.all<ChangeRow>('select * exclude (run_id) from vol_change order by portfolio_id, estimator, window_days, date');
    ({ returns, weights } = await readStoredInputs(ws.db));
    for (const r of await ws.db.all<{ portfolio_id: string; date: string; window_days: number; estimator: string; vol_ex_ante: number | null }>(
      'select portfolio_id, date, window_days, estimator, vol_ex_ante from risk_daily',
    )) {
      riskVol.set(`${r.portfolio_id}|${r.date}|${r.window_days}|${r.estimator}`, r.vol_ex_ante);
    }
    for (const r of await ws.db.all<{ portfolio_id: string; date: string; window_days: number; estimator: string; security_id: string; from_weights: number; weight_prev: number; weight_now: number }>(
      'select * from vol_change_securities',
    )) {
      const key = `${r.portfolio_id}|${r.date}|${r.window_days}|${r.estimator}`;
      (parts.get(key) ?? parts.set(key, new Map()).get(key)!).set(r.security_id, { from: r.from_weights, w0: r.weight_prev, w1: r.weight_now });
    }
  });
  afterAll(() => ws?.cleanup());

  /** The W returns of a security ending at date index d, or null without a full window. */
  const window = (security: string, d: number, w: number): number[] | null => {
    if (d - w + 1 < 1) return null;
    const out: number[] = [];
    for (let u = d - w + 1; u <= d; u++) {
      const r = returns.get(security)?.get(dates[u]);
      if (r === undefined) return null;
      out.push(r);
    }
    return out;
  };
  /** sqrt(A w'Sw) and S w with S the simple-statistics sample covariance of the windows ending at d. */
  const under = (ids: string[], d: number, w: number, book: number[]) => {
    const series = ids.map((id) => window(id, d, w)!);
    const sw = ids.map((_, i) => ids.reduce((sum, _id, k) => sum + ss.sampleCovariance(series[i], series[k]) * book[k], 0));
    return { vol: Math.sqrt(A * book.reduce((sum, x, i) => sum + x * sw[i], 0)), sw };
  };

  it('has a row for every later date of every window where both dates have a volatility, and the parts add up to the change', () => {
    const sample = rows.filter((r) => r.estimator === 'sample');
    expect(new Set(sample.map((r) => r.window_days))).toEqual(new Set([21, 63]));
    expect(rows.some((r) => r.estimator === 'ewma' && r.window_days === 0)).toBe(true);
    for (const r of rows) {
      expect(dates.indexOf(r.prev_date)).toBe(dates.indexOf(r.date) - 1);
      expect(riskVol.get(`${r.portfolio_id}|${r.date}|${r.window_days}|${r.estimator}`)).not.toBeNull();
      expect(riskVol.get(`${r.portfolio_id}|${r.prev_date}|${r.window_days}|${r.estimator}`)).not.toBeNull();
      if (r.status === 'history_broken') continue;
      expect(r.from_weights! + r.from_market!).toBeCloseTo(r.vol_now! - r.vol_prev!, 15);
    }
    // one row per date pair whose two risk rows have a volatility (and nothing for a first date)
    const withVol = [...riskVol.entries()].filter(([, v]) => v !== null).map(([k]) => k);
    const pairs = withVol.filter((k) => {
      const [p, date, w, e] = k.split('|');
      const d = dates.indexOf(date);
      return d > 0 && riskVol.get(`${p}|${dates[d - 1]}|${w}|${e}`) != null;
    });
    expect(rows.length).toBe(pairs.length);
  });

  it('matches the symmetric split computed from simple-statistics covariances on every sample row, partial ones included', () => {
    let checked = 0;
    for (const r of rows.filter((x) => x.estimator === 'sample' && x.status !== 'history_broken')) {
      const d = dates.indexOf(r.date);
      const w = r.window_days;
      const held0 = weights.get(`${r.portfolio_id}|${r.prev_date}`)!;
      const held1 = weights.get(`${r.portfolio_id}|${r.date}`)!;
      const all = [...new Set([...held0.keys(), ...held1.keys()])].sort();
      const ids = all.filter((id) => window(id, d - 1, w) !== null && window(id, d, w) !== null);
      expect(r.status).toBe(ids.length === all.length ? 'ok' : 'partial_history');
      const w0 = ids.map((id) => held0.get(id) ?? 0);
      const w1 = ids.map((id) => held1.get(id) ?? 0);
      const [a0, b0, a1, b1] = [under(ids, d - 1, w, w0), under(ids, d - 1, w, w1), under(ids, d, w, w0), under(ids, d, w, w1)];
      const fromWeights = 0.5 * (b0.vol - a0.vol + (b1.vol - a1.vol));
      expect(r.vol_prev!).toBeCloseTo(a0.vol, 12);
      expect(r.vol_now!).toBeCloseTo(b1.vol, 12);
      expect(r.from_weights!).toBeCloseTo(fromWeights, 12);
      expect(r.from_market!).toBeCloseTo(b1.vol - a0.vol - fromWeights, 12);
      if (r.status === 'ok') {
        expect(r.vol_prev!).toBeCloseTo(riskVol.get(`${r.portfolio_id}|${r.prev_date}|${w}|sample`)!, 13);
        expect(r.vol_now!).toBeCloseTo(riskVol.get(`${r.portfolio_id}|${r.date}|${w}|sample`)!, 13);
      }
      const bySecurity = parts.get(`${r.portfolio_id}|${r.date}|${w}|sample`)!;
      expect([...bySecurity.keys()].sort()).toEqual(ids);
      ids.forEach((id, i) => {
        const trade = w1[i] - w0[i];
        const expected = 0.5 * ((A * trade * (a0.sw[i] + b0.sw[i])) / (a0.vol + b0.vol) + (A * trade * (a1.sw[i] + b1.sw[i])) / (a1.vol + b1.vol));
        expect(bySecurity.get(id)!.from).toBeCloseTo(expected, 13);
        expect(bySecurity.get(id)!.w0).toBeCloseTo(w0[i], 15);
      });
      const largest = ids.reduce((best, id) => (Math.abs(bySecurity.get(id)!.from) > Math.abs(bySecurity.get(best)!.from) ? id : best), ids[0]);
      expect(r.weights_driver_security_id).toBe(largest);
      expect(ss.sum([...bySecurity.values()].map((x) => x.from))).toBeCloseTo(r.from_weights!, 14);
      checked++;
    }
    expect(checked).toBeGreaterThan(600);
  });

  it('says partial_history while a newly listed holding lacks a full window on either date, and ok once it has one', () => {
    // acct-growth buys the late listing on day 150; its 63-day window is full from day LISTING_DAY + 63
    const at = (day: number) => rows.find((r) => r.portfolio_id === 'acct-growth' && r.window_days === 63 && r.estimator === 'sample' && r.date === dates[day]);
    expect(at(151)?.status).toBe('partial_history');
    expect(at(LISTING_DAY + 63)?.status).toBe('partial_history');
    expect(at(LISTING_DAY + 64)?.status).toBe('ok');
  });

  it('puts a rebalance in the weights: on the day after a new snapshot the weights part dwarfs a drift day', () => {
    // day 60's snapshot, in force from day 60, rebalances acct-growth: the change from day 59 to 60 carries it
    const row = (day: number) => rows.find((r) => r.portfolio_id === 'acct-growth' && r.window_days === 21 && r.estimator === 'sample' && r.date === dates[day])!;
    expect(Math.abs(row(60).from_weights!)).toBeGreaterThan(5 * Math.abs(row(59).from_weights!));
  });
});
