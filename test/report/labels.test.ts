import { describe, expect, it } from 'vitest';
import { formatLimitFigure } from '../../src/report/format.ts';
import { estimateLabel, exceptionsLabel } from '../../src/labels.ts';

describe('report labels', () => {
  it('tells a shrunk estimate from the sample one of the same window, and names the EWMA without a window', () => {
    expect(estimateLabel('sample', 63)).toBe('63-day');
    expect(estimateLabel('shrunk', 63)).toBe('63-day shrunk');
    expect(estimateLabel('ewma', 0)).toBe('EWMA');
  });

  it('shows a volatility level as a percentage and a backtest zone level as a count of exceptions', () => {
    expect(formatLimitFigure('vol_ex_ante', 0.12, 1)).toBe('12.0%');
    expect(formatLimitFigure('backtest_zone', 10, 1)).toBe('10');
    expect(formatLimitFigure('backtest_zone', null)).toBe('n/a');
  });

  it('counts one exception in the singular', () => {
    expect(exceptionsLabel(1)).toBe('1 exception');
    expect(exceptionsLabel(0)).toBe('0 exceptions');
    expect(exceptionsLabel(5)).toBe('5 exceptions');
  });
});
