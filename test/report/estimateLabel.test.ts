import { describe, expect, it } from 'vitest';
import { estimateLabel } from '../../src/report/format.ts';

describe('estimateLabel', () => {
  it('tells a shrunk estimate from the sample one of the same window, and names the EWMA without a window', () => {
    expect(estimateLabel('sample', 63)).toBe('63-day');
    expect(estimateLabel('shrunk', 63)).toBe('63-day shrunk');
    expect(estimateLabel('ewma', 0)).toBe('EWMA');
  });
});
