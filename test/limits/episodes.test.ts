import { describe, expect, it } from 'vitest';
import { replayEpisodes, transitionsOf, type MetricPoint } from '../../src/limits/episodes.ts';
import { applicableLimits } from '../../src/limits/applicableLimits.ts';
import { matchEpisodes } from '../../src/limits/matchEpisodes.ts';
import type { ResolvedLimit } from '../../src/config/load.ts';

// SPEC section 6 defaults for a 15% limit: warning 0.9 x limit, clear 0.85 x limit
const LEVELS = { limit: 0.15, warning: 0.135, clear: 0.1275 };

function series(values: (number | null)[]): MetricPoint[] {
  return values.map((value, i) => ({ date: `2026-03-${String(i + 2).padStart(2, '0')}`, value }));
}

describe('replayEpisodes', () => {
  it('opens at warning, escalates at the limit, keeps the peak and closes on the first date below clear', () => {
    const [e, ...rest] = replayEpisodes(series([0.1, 0.14, 0.152, 0.171, 0.16, 0.13, 0.127]), LEVELS);
    expect(rest).toEqual([]);
    expect(e).toMatchObject({
      openedOn: '2026-03-03',
      openLevel: 'warning',
      level: 'breach',
      escalatedOn: '2026-03-04',
      peakValue: 0.171,
      peakOn: '2026-03-05',
      closedOn: '2026-03-08',
      closeValue: 0.127,
    });
    expect(transitionsOf(e).map((t) => [t.kind, t.date])).toEqual([
      ['limit_opened', '2026-03-03'],
      ['limit_escalated', '2026-03-04'],
      ['limit_closed', '2026-03-08'],
    ]);
  });

  // hysteresis band between clear and warning: common practice, no source
  it('holds an episode while the metric stays between clear and warning, and never de-escalates', () => {
    const [e] = replayEpisodes(series([0.155, 0.13, 0.128, 0.1275, 0.14]), LEVELS);
    expect(e).toMatchObject({ openLevel: 'breach', level: 'breach', escalatedOn: null, closedOn: null });
  });

  it('treats reaching a level as at or above it, and exactly at clear as not yet closed', () => {
    const episodes = replayEpisodes(series([0.135, 0.1275, 0.12, 0.15]), LEVELS);
    expect(episodes.map((e) => [e.openedOn, e.openLevel, e.closedOn])).toEqual([
      ['2026-03-02', 'warning', '2026-03-04'],
      ['2026-03-05', 'breach', null],
    ]);
  });

  it('holds the state over dates without a value (history too short)', () => {
    const [e] = replayEpisodes(series([null, 0.16, null, null, 0.15]), LEVELS);
    expect(e).toMatchObject({ openedOn: '2026-03-03', closedOn: null, peakOn: '2026-03-03' });
    expect(replayEpisodes(series([null, null]), LEVELS)).toEqual([]);
  });

  it('handles a single point and does not mutate its input', () => {
    const points = series([0.2]);
    const copy = structuredClone(points);
    expect(replayEpisodes(points, LEVELS)).toHaveLength(1);
    expect(points).toEqual(copy);
  });

  it('refuses dates out of order and levels out of order', () => {
    const bad = [...series([0.1, 0.1])].reverse();
    expect(() => replayEpisodes(bad, LEVELS)).toThrow(/ascending date order/);
    expect(() => replayEpisodes([], { limit: 0.15, warning: 0.16, clear: 0.1 })).toThrow(/clear < warning <= limit/);
  });
});

describe('applicableLimits', () => {
  const base = { metric: 'vol_ex_ante', method: null, estimator: 'sample', warning: 0.09, clear: 0.085 } as const;
  const limits: ResolvedLimit[] = [
    { ...base, portfolio: '*', window: 63, limit: 0.1 },
    { ...base, portfolio: '*', window: 21, limit: 0.1 },
    { ...base, portfolio: 'acct-balanced', window: 63, limit: 0.2, warning: 0.18, clear: 0.17 },
  ];

  it('lets a specific id override * for the same metric, window and estimator only', () => {
    expect(applicableLimits(limits, 'acct-balanced').map((l) => [l.portfolio, l.window])).toEqual([
      ['acct-balanced', 63],
      ['*', 21],
    ]);
    expect(applicableLimits(limits, 'acct-growth').map((l) => [l.portfolio, l.window])).toEqual([
      ['*', 63],
      ['*', 21],
    ]);
  });
});

describe('matchEpisodes', () => {
  const derived = replayEpisodes(series([0.16, 0.1, 0.1, 0.16, 0.16]), LEVELS);

  it('keeps a recorded episode whose dates the re-derived one overlaps, and retracts the others', () => {
    const stored = [
      { breachId: 7, openedOn: '2026-03-02', closedOn: '2026-03-04' },
      { breachId: 8, openedOn: '2026-03-01', closedOn: '2026-03-01' },
      { breachId: 9, openedOn: '2026-03-06', closedOn: null },
    ];
    const { matches, retracted } = matchEpisodes(derived, stored);
    expect(matches.map((m) => [m.derived.openedOn, m.stored?.breachId ?? null])).toEqual([
      ['2026-03-02', 7],
      ['2026-03-05', 9],
    ]);
    expect(retracted.map((s) => s.breachId)).toEqual([8]);
  });
});
