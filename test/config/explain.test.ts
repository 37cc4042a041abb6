import { describe, expect, it } from 'vitest';
import { jsonErrorOffset, knownKeysAt, lineAndColumn, nearestKey } from '../../src/config/explain.ts';
import { configSchema } from '../../src/config/schema.ts';

function offsetOf(text: string): number {
  try {
    JSON.parse(text);
  } catch (err) {
    return jsonErrorOffset(text, (err as Error).message);
  }
  throw new Error('expected a syntax error');
}

describe('jsonErrorOffset', () => {
  // RFC 8259: no trailing commas, no bare words, strings in double quotes
  it('points at the offending character whether or not V8 states the position', () => {
    expect(offsetOf('{"a": 1,\n}')).toBe(9); // the "}" after a trailing comma
    expect(offsetOf('{"a": }')).toBe(6); // "Unexpected token '}'" states no position
    expect(offsetOf('{"a": nope}')).toBe(7); // "n" may still start null: the "o" is the first wrong character
    expect(offsetOf('{"a": 1} x')).toBe(9);
  });

  it('gives the end of the text when the text stops too early', () => {
    expect(offsetOf('{"a": [1, 2')).toBe(11);
    expect(offsetOf('')).toBe(0);
  });
});

describe('lineAndColumn', () => {
  it('counts lines and columns from 1, as editors do', () => {
    expect(lineAndColumn('ab\ncd\nef', 0)).toEqual({ line: 1, column: 1 });
    expect(lineAndColumn('ab\ncd\nef', 4)).toEqual({ line: 2, column: 2 });
    expect(lineAndColumn('ab\ncd\nef', 6)).toEqual({ line: 3, column: 1 });
  });
});

describe('nearestKey', () => {
  it('suggests a near miss, ignoring case, and nothing for an unrelated word', () => {
    expect(nearestKey('limt', ['limit', 'clear', 'warning'])).toBe('limit');
    expect(nearestKey('BaseCurrency', ['baseCurrency', 'database'])).toBe('baseCurrency');
    expect(nearestKey('colour', ['inbox', 'archive', 'limits'])).toBeUndefined();
  });
});

describe('knownKeysAt', () => {
  it('walks through defaults and arrays to the object at a path', () => {
    expect(knownKeysAt(configSchema, ['limits', 0])).toEqual(['portfolio', 'metric', 'method', 'window', 'estimator', 'limit', 'warning', 'clear']);
    expect(knownKeysAt(configSchema, ['risk', 'ewma'])).toEqual(['enabled', 'lambda', 'seedDays']);
    expect(knownKeysAt(configSchema, ['inbox'])).toBeNull();
  });
});
