import { describe, expect, it } from 'vitest';
import { isBearerToken, redactSecrets } from '../../src/alerts/redact.ts';

describe('redactSecrets', () => {
  it('replaces a secret however it is quoted: raw, JSON-escaped, URL-encoded, and line by line', () => {
    const secret = 'tok-81af\r\nsecond-line-77';
    const text = [
      `raw ${secret} end`,
      `json ${JSON.stringify({ h: `Bearer ${secret}` })}`,
      `url ${encodeURIComponent(secret)}`,
      'only the second line: second-line-77',
    ].join(' | ');
    const out = redactSecrets(text, [secret]);
    for (const piece of ['tok-81af', 'second-line-77', '%0D%0A']) expect(out).not.toContain(piece);
    expect(out).toContain('[redacted]');
    expect(out.startsWith('raw [redacted] end')).toBe(true);
  });

  it('leaves text without a secret as it is, and ignores an unset secret', () => {
    expect(redactSecrets('webhook answered HTTP 500', [undefined, ''])).toBe('webhook answered HTTP 500');
  });

  it('does not mutate the list of secrets', () => {
    const secrets = Object.freeze(['abcdef']);
    expect(redactSecrets('x abcdef y', secrets)).toBe('x [redacted] y');
  });
});

describe('isBearerToken', () => {
  // RFC 6750 section 2.1: b64token = 1*( ALPHA / DIGIT / "-" / "." / "_" / "~" / "+" / "/" ) *"="
  it('accepts the b64token characters and refuses CR, LF, spaces and quotes', () => {
    expect(isBearerToken('mF_9.B5f-4.1JqM')).toBe(true); // the example token of RFC 6750 section 2.1
    expect(isBearerToken('abc+/~==')).toBe(true);
    for (const bad of ['a\r\nb', 'a b', 'a"b', '', '=abc']) expect(isBearerToken(bad)).toBe(false);
  });
});
