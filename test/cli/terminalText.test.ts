import { describe, expect, it } from 'vitest';
import { forTableCell, forTerminal, jsonForTerminal } from '../../src/cli/terminalText.ts';

// ECMA-48 C0/C1 controls and the bidi controls of Unicode Standard Annex #9
// (LRE U+202A .. RLO U+202E, LRI U+2066 .. PDI U+2069, LRM, RLM, ALM)
describe('terminal text', () => {
  it('makes an ANSI escape, a bell and a right-to-left override visible', () => {
    expect(forTerminal('EQ-\u001b[31mRED\u0007\u202eFDP.exe')).toBe('EQ-\\u{1b}[31mRED\\u{7}\\u{202e}FDP.exe');
  });

  it('keeps newlines and tabs in messages but not in table cells', () => {
    expect(forTerminal('a\tb\nc')).toBe('a\tb\nc');
    expect(forTableCell('a\tb\nc\r')).toBe('a\\u{9}b\\u{a}c\\u{d}');
  });

  it('leaves ordinary text alone, accents and right-to-left letters included', () => {
    const text = 'Zürich Fonds — שקל, 10 €';
    expect(forTerminal(text)).toBe(text);
    expect(forTableCell(text)).toBe(text);
  });

  it('escapes what JSON.stringify leaves raw, and the JSON still parses to the same value', () => {
    const value = { id: 'a\u202eb\u0085c\u007f\u2028' };
    const json = jsonForTerminal(JSON.stringify(value));
    expect(json).toBe('{"id":"a\\u202eb\\u0085c\\u007f\\u2028"}');
    expect(JSON.parse(json)).toEqual(value);
  });
});
