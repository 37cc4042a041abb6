import { describe, expect, it } from 'vitest';
import { sourceSchema } from '../../src/config/schema.ts';
import type { Rejection } from '../../src/errors.ts';
import { withFix } from '../../src/ingest/hints.ts';

const prices = sourceSchema.parse({ name: 'prices', kind: 'prices', pattern: 'prices*.csv*' });
const badDate = (value: string, row = 1): Rejection => ({ code: 'bad_value', file: 'p.csv', row, column: 'date', value, message: 'x' });

describe('withFix', () => {
  // day first when the first part exceeds 12, month first when the second does (common practice, no source)
  it('tells day-first from month-first dates where it can, and names both where it cannot', () => {
    expect(withFix(badDate('13/04/2026'), prices).hint).toContain('"%d/%m/%Y"');
    expect(withFix(badDate('04/13/2026'), prices).hint).toContain('"%m/%d/%Y"');
    expect(withFix(badDate('04/05/2026'), prices).hint).toContain('"%d/%m/%Y" or "%m/%d/%Y"');
  });

  it('leaves a date of the configured shape that is simply wrong to the file, with no hint', () => {
    const fix = withFix(badDate('2026-04-31'), prices);
    expect(fix.fixIn).toBe('file');
    expect(fix.hint).toBeUndefined();
  });

  it('does not mutate the rejection it is given', () => {
    const r = badDate('30.11.2026');
    const copy = { ...r };
    expect(withFix(r, prices).fixIn).toBe('config');
    expect(r).toEqual(copy);
  });

  it('sends a file that matches no source to either the file name or the config', () => {
    expect(withFix({ code: 'unknown_kind', file: 'h.csv', message: 'x' }, null).fixIn).toBe('either');
  });
});
