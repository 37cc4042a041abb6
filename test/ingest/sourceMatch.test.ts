import { describe, expect, it } from 'vitest';
import { sourceSchema } from '../../src/config/schema.ts';
import { globToRegExp, matchSource } from '../../src/ingest/sourceMatch.ts';

describe('globToRegExp', () => {
  // glob semantics as in POSIX fnmatch for * and ? (common practice, no source)
  it('reads * as any run of characters and ? as exactly one', () => {
    expect(globToRegExp('prices*.csv*').test('prices_20260412.csv.gz')).toBe(true);
    expect(globToRegExp('prices*.csv*').test('prices.csv')).toBe(true);
    expect(globToRegExp('fx_????.csv').test('fx_0412.csv')).toBe(true);
    expect(globToRegExp('fx_????.csv').test('fx_041.csv')).toBe(false);
  });

  it('treats regex characters literally and anchors both ends', () => {
    expect(globToRegExp('a+b(1).csv').test('a+b(1).csv')).toBe(true);
    expect(globToRegExp('prices.csv').test('pricesXcsv')).toBe(false);
    expect(globToRegExp('prices*.csv').test('old_prices.csv')).toBe(false);
  });

  it('ignores case', () => {
    expect(globToRegExp('prices*.csv*').test('PRICES_0412.CSV')).toBe(true);
  });
});

describe('matchSource', () => {
  const sources = [
    sourceSchema.parse({ name: 'nordbank', kind: 'prices', pattern: 'nb_*.csv', delimiter: ';' }),
    sourceSchema.parse({ name: 'any', kind: 'positions', pattern: '*.csv' }),
  ];

  it('takes the first source that matches, in config order', () => {
    expect(matchSource(sources, 'nb_0412.csv')?.name).toBe('nordbank');
    expect(matchSource(sources, 'holdings.csv')?.name).toBe('any');
  });

  it('returns undefined when nothing matches', () => {
    expect(matchSource(sources, 'notes.txt')).toBeUndefined();
  });
});
