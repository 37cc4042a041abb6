import type { z } from 'zod';

/**
 * Helpers that turn a config mistake into the fix: where a JSON syntax error is (line
 * and column, which editors show, rather than a character offset) and which known key a
 * misspelt one was probably meant to be.
 */

/** 1-based line and column of a character offset. */
export function lineAndColumn(text: string, offset: number): { line: number; column: number } {
  const before = text.slice(0, offset);
  const line = before.split('\n').length;
  return { line, column: offset - (before.lastIndexOf('\n') + 1) + 1 };
}

/**
 * Offset of the character JSON.parse stopped at. V8 names the position in most
 * messages but not in "Unexpected token"; then the shortest prefix that already fails
 * for a reason other than running out of input ends at the offending character.
 */
export function jsonErrorOffset(text: string, message: string): number {
  const stated = /at position (\d+)/.exec(message);
  if (stated) return Number(stated[1]);
  if (!failsInside(text)) return text.length; // the text just ends too early
  let lo = 0; // failsInside(text.slice(0, lo)) is false
  let hi = text.length; // failsInside(text.slice(0, hi)) is true
  while (hi - lo > 1) {
    const mid = (lo + hi) >> 1;
    if (failsInside(text.slice(0, mid))) hi = mid;
    else lo = mid;
  }
  return hi - 1;
}

/** Does parsing fail before the end of `text` (not merely because the text stops)? */
function failsInside(text: string): boolean {
  try {
    JSON.parse(text);
    return false;
  } catch (err) {
    const message = (err as Error).message;
    if (/Unexpected end of JSON input/.test(message)) return false;
    const stated = /at position (\d+)/.exec(message);
    return !(stated && Number(stated[1]) >= text.length);
  }
}

/** The known key closest to `key` (case ignored, edit distance at most a third of its length, and at least 2), if any. */
export function nearestKey(key: string, known: readonly string[]): string | undefined {
  let best: { key: string; distance: number } | undefined;
  for (const candidate of known) {
    const distance = editDistance(key.toLowerCase(), candidate.toLowerCase());
    if (!best || distance < best.distance) best = { key: candidate, distance };
  }
  return best && best.distance <= Math.max(2, Math.floor(key.length / 3)) ? best.key : undefined;
}

/** Levenshtein distance, one row at a time. */
function editDistance(a: string, b: string): number {
  let previous = Array.from({ length: b.length + 1 }, (_, j) => j);
  for (let i = 1; i <= a.length; i++) {
    const current = [i];
    for (let j = 1; j <= b.length; j++) {
      current[j] = Math.min(previous[j] + 1, current[j - 1] + 1, previous[j - 1] + (a[i - 1] === b[j - 1] ? 0 : 1));
    }
    previous = current;
  }
  return previous[b.length];
}

interface SchemaDef {
  type: string;
  innerType?: z.ZodType;
  in?: z.ZodType;
  shape?: Record<string, z.ZodType>;
  element?: z.ZodType;
  valueType?: z.ZodType;
}

const defOf = (schema: z.ZodType) => (schema as unknown as { _zod: { def: SchemaDef } })._zod.def;

/** The keys an object of `schema` at `path` accepts (through defaults, optionals, arrays and records); null if not an object. */
export function knownKeysAt(schema: z.ZodType, path: readonly PropertyKey[]): string[] | null {
  let current: z.ZodType | undefined = schema;
  for (let i = 0; ; i++) {
    current = unwrap(current);
    const def = defOf(current);
    if (i === path.length) return def.type === 'object' && def.shape ? Object.keys(def.shape) : null;
    const step = path[i];
    current = def.type === 'object' ? def.shape?.[String(step)] : def.type === 'array' ? def.element : def.type === 'record' ? def.valueType : undefined;
    if (!current) return null;
  }
}

function unwrap(schema: z.ZodType): z.ZodType {
  let current = schema;
  for (;;) {
    const def = defOf(current);
    const inner = ['default', 'prefault', 'optional', 'nullable', 'readonly'].includes(def.type) ? def.innerType : def.type === 'pipe' ? def.in : undefined;
    if (!inner) return current;
    current = inner;
  }
}
