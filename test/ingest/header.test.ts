import { describe, expect, it } from 'vitest';
import { sourceSchema } from '../../src/config/schema.ts';
import { mapColumns, splitHeader } from '../../src/ingest/header.ts';
import { layoutOf } from '../../src/ingest/layout.ts';

describe('splitHeader', () => {
  // quoting as in RFC 4180 section 2 (fields in double quotes, "" for a quote inside)
  it('splits on the delimiter outside quotes, unquotes and trims', () => {
    expect(splitHeader('date; "Close; adj." ;"say ""hi"""', ';')).toEqual(['date', 'Close; adj.', 'say "hi"']);
  });

  it('keeps empty names, so positions still line up with the data', () => {
    expect(splitHeader('date,,price', ',')).toEqual(['date', '', 'price']);
  });
});

describe('mapColumns', () => {
  const prices = layoutOf('prices');
  const source = (columns: Record<string, string> = {}) => sourceSchema.parse({ name: 's', kind: 'prices', pattern: '*', columns });

  it('maps renamed and canonical names case-insensitively, leaving other columns unread', () => {
    const mapped = mapColumns(['Datum', 'SECURITY_ID', 'Exchange', 'Close'], source({ date: 'datum', price: 'close' }), prices, 'f.csv');
    expect(mapped).toEqual({ ok: true, value: ['date', 'security_id', null, 'price'] });
  });

  it('says a first line that reads as a data row has no header, and keeps missing_column for a header with other names', () => {
    const dated = mapColumns(['2026-12-01', 'EQ-C', '50.3'], source(), prices, 'f.csv');
    expect(dated).toMatchObject({ ok: false, rejection: { code: 'no_header', row: 0, message: expect.stringContaining('(it starts with a date)') } });
    const numbers = mapColumns(['EQ-C', '50.3', '0,75'], source(), prices, 'f.csv');
    expect(numbers).toMatchObject({ ok: false, rejection: { code: 'no_header', message: expect.stringContaining('(most of its fields are numbers)') } });
    const named = mapColumns(['Datum', 'Wertpapier', 'Kurs'], source(), prices, 'f.csv');
    expect(named).toMatchObject({ ok: false, rejection: { code: 'missing_column', column: 'date' } });
  });

  it('rejects a header naming a column twice', () => {
    const mapped = mapColumns(['date', 'security_id', 'price', 'Price'], source(), prices, 'f.csv');
    expect(mapped).toMatchObject({ ok: false, rejection: { code: 'unreadable', column: 'price' } });
  });
});
