import { sampleCorrelation } from 'simple-statistics';
import { describe, expect, it } from 'vitest';
import { correlationOfReturns, type ReturnObservation } from '../../src/report/correlation.ts';
import { createRandom } from '../../src/demo/random.ts';

function observations(series: Record<string, (number | null)[]>): ReturnObservation[] {
  return Object.entries(series).flatMap(([id, values]) => values.map((v, i) => ({ security_id: id, date_index: i + 1, log_return: v })));
}

describe('correlationOfReturns', () => {
  const random = createRandom(3);
  const a = Array.from({ length: 63 }, () => random.normal() * 0.01);
  const b = a.map((x) => 0.6 * x + 0.008 * random.normal());
  const c = a.map((x) => -0.3 * x + 0.01 * random.normal());

  it('matches simple-statistics sampleCorrelation pair by pair', () => {
    const out = correlationOfReturns(['EQ-A', 'EQ-B', 'BD-C'], observations({ 'EQ-A': a, 'EQ-B': b, 'BD-C': c }));
    expect(out.observations).toBe(63);
    expect(out.values[0][1]).toBeCloseTo(sampleCorrelation(a, b), 12);
    expect(out.values[0][2]).toBeCloseTo(sampleCorrelation(a, c), 12);
    expect(out.values[2][1]).toBeCloseTo(sampleCorrelation(c, b), 12);
    expect(out.values.map((row, i) => row[i])).toEqual([1, 1, 1]);
  });

  it('uses only the dates on which every security has a return (listwise), whatever the row order', () => {
    const withGap: (number | null)[] = [...b];
    withGap[10] = null;
    const rows = observations({ 'EQ-A': a, 'EQ-B': withGap }).reverse();
    const out = correlationOfReturns(['EQ-A', 'EQ-B'], rows);
    const keep = (x: number[]) => x.filter((_, i) => i !== 10);
    expect(out.observations).toBe(62);
    expect(out.values[0][1]).toBeCloseTo(sampleCorrelation(keep(a), keep(b)), 12);
  });

  it('gives NaN for a security whose returns do not vary (its correlation is undefined)', () => {
    const flat = a.map(() => 0);
    const out = correlationOfReturns(['EQ-A', 'BD-FLAT'], observations({ 'EQ-A': a, 'BD-FLAT': flat }));
    expect(out.values[0][1]).toBeNaN();
    expect(out.values[1][1]).toBeNaN();
    expect(out.values[0][0]).toBe(1);
  });

  it('refuses fewer than 3 common dates', () => {
    expect(() => correlationOfReturns(['EQ-A', 'EQ-B'], observations({ 'EQ-A': [0.01, 0.02], 'EQ-B': [0.0, 0.01] }))).toThrow(/at least 3/);
  });

  it('does not mutate its input', () => {
    const rows = observations({ 'EQ-A': a, 'EQ-B': b });
    const copy = structuredClone(rows);
    correlationOfReturns(['EQ-A', 'EQ-B'], rows);
    expect(rows).toEqual(copy);
  });
});
