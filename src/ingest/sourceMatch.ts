import type { SourceConfig } from '../config/schema.ts';

/**
 * A file-name glob as a RegExp: `*` is any run of characters, `?` one character,
 * everything else literal. Case-insensitive, because custodians flip between
 * `Prices.CSV` and `prices.csv` without meaning anything by it.
 */
export function globToRegExp(pattern: string): RegExp {
  const body = [...pattern]
    .map((ch) => (ch === '*' ? '.*' : ch === '?' ? '.' : ch.replace(/[.+^${}()|[\]\\/]/g, '\\$&')))
    .join('');
  return new RegExp(`^${body}$`, 'is');
}

/** The first source whose pattern matches the base name (config order decides ties). */
export function matchSource(sources: readonly SourceConfig[], fileName: string): SourceConfig | undefined {
  return sources.find((s) => globToRegExp(s.pattern).test(fileName));
}
