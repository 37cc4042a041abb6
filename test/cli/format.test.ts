import { describe, expect, it } from 'vitest';
import { formatResult, parseFormat, readableNumber, toCsv, toTable } from '../../src/cli/format.ts';
import type { QueryResult } from '../../src/read/readQuery.ts';

const result: QueryResult = {
  columns: ['portfolio_id', 'vol_ex_ante', 'note'],
  rows: [
    ['acct-growth', 0.1523456789012345, 'plain'],
    ['acct-income', null, 'has, comma and "quotes"\nand a line break'],
  ],
};

describe('toCsv', () => {
  // RFC 4180 section 2: fields with commas, quotes or line breaks are quoted, quotes doubled
  it('writes a header row and quotes fields as RFC 4180 asks', () => {
    expect(toCsv(result)).toBe(
      'portfolio_id,vol_ex_ante,note\n' +
        'acct-growth,0.1523456789012345,plain\n' +
        'acct-income,,"has, comma and ""quotes""\nand a line break"\n',
    );
  });

  it('prints every double in its shortest round-trip form (ECMAScript Number::toString)', () => {
    const values = [0.1 + 0.2, 1 / 3, 5e-324, 1.7976931348623157e308, -0, 2 ** 53 + 2];
    const csv = toCsv({ columns: ['x'], rows: values.map((v) => [v]) });
    const back = csv.trim().split('\n').slice(1).map(Number);
    expect(back).toEqual(values.map((v) => (Object.is(v, -0) ? 0 : v)));
  });
});

describe('formatResult json', () => {
  it('gives objects keyed by column with null kept and doubles exact', () => {
    const parsed = JSON.parse(formatResult(result, 'json')) as Record<string, unknown>[];
    expect(parsed[0]).toEqual({ portfolio_id: 'acct-growth', vol_ex_ante: 0.1523456789012345, note: 'plain' });
    expect(parsed[1].vol_ex_ante).toBeNull();
  });
});

describe('toTable', () => {
  it('aligns columns, right-aligns numbers and counts the rows', () => {
    const lines = toTable({ columns: ['id', 'n'], rows: [['acct-growth', 5], ['b', 123]] }).split('\n');
    expect(lines[0]).toBe('id             n');
    expect(lines[2]).toBe('acct-growth    5');
    expect(lines[3]).toBe('b            123');
    expect(lines[4]).toBe('(2 rows)');
  });
});

describe('toTable units', () => {
  it('shows percent columns as percentages, amounts with two decimals and booleans as yes/no; csv keeps the doubles', () => {
    const r: QueryResult = { columns: ['vol', 'value', 'ok'], rows: [[0.14577298288177143, 8470123.456, true]], units: ['percent', 'amount', null] };
    expect(toTable(r).split('\n')[2]).toBe('14.58%  8,470,123.46  yes');
    expect(toCsv(r)).toBe('vol,value,ok\n0.14577298288177143,8470123.456,true\n');
  });
});

describe('readableNumber', () => {
  it('keeps six significant digits, two decimals of large figures, and integers whole', () => {
    expect(readableNumber(0.14577298288177143)).toBe('0.145773');
    expect(readableNumber(8470123.4567)).toBe('8470123.46');
    expect(readableNumber(-0.000012345678)).toBe('-0.0000123457');
    expect(readableNumber(42)).toBe('42');
  });
});

describe('parseFormat', () => {
  it('refuses a format it does not know, naming the ones it does', () => {
    expect(() => parseFormat('xml')).toThrow(/table, csv, json/);
  });
});
