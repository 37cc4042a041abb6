import { describe, expect, it } from 'vitest';
import { volChangeSentence, type VolChangeFacts } from '../../src/limits/volChangeText.ts';

const facts = (over: Partial<VolChangeFacts>): VolChangeFacts => ({
  prev_date: '2026-03-02',
  vol_prev: 0.12,
  vol_now: 0.1,
  from_weights: -0.004,
  from_market: -0.016,
  status: 'ok',
  weights_driver_security_id: 'EQ-NORDWIND',
  weights_driver_change: -0.001,
  ...over,
});

describe('volChangeSentence', () => {
  it('signs every part in percentage points and names no security when none made most of the weights part', () => {
    expect(volChangeSentence('EWMA volatility', facts({}))).toBe(
      'EWMA volatility -2.0 points since 2026-03-02: -1.6 points from the market, -0.4 points from the weights',
    );
  });

  it('names the security whose part has the sign of the weights part and at least half of it', () => {
    expect(volChangeSentence('21-day volatility', facts({ weights_driver_change: -0.003 }))).toMatch(/-0\.4 points from the weights, mostly EQ-NORDWIND$/);
    expect(volChangeSentence('21-day volatility', facts({ weights_driver_change: 0.003 }))).not.toMatch(/mostly/);
  });

  it('names no security behind a weights part that shows as +0.0 or -0.0 points', () => {
    // all of a tiny part is still "most" of it, but a driver of nothing visible says nothing
    for (const part of [0.0004, -0.0004]) {
      const text = volChangeSentence('63-day volatility', facts({ from_weights: part, weights_driver_change: part }));
      expect(text).toMatch(/[+-]0\.0 points from the weights$/);
    }
    // the smallest part that shows keeps its driver
    expect(volChangeSentence('63-day volatility', facts({ from_weights: 0.0006, weights_driver_change: 0.0006 }))).toMatch(
      /\+0\.1 points from the weights, mostly EQ-NORDWIND$/,
    );
  });

  it('says when only part of the holdings had a full history on both dates, and writes a rounding-level change as +0.0', () => {
    const text = volChangeSentence('63-day volatility', facts({ status: 'partial_history', vol_now: 0.12 - 1e-6, from_weights: 0, from_market: -1e-6 }));
    expect(text).toBe(
      '63-day volatility +0.0 points since 2026-03-02 (holdings with a full history on both dates): +0.0 points from the market, +0.0 points from the weights',
    );
  });
});
