import type { Rejection } from '../errors.ts';

/** How many of a file's first (decompressed) bytes are looked at for the marks of UTF-16. */
export const ENCODING_PROBE_BYTES = 512;

const NUL = 0x00;

/**
 * Which UTF-16 the first bytes are in, and what shows it; null for anything else. A
 * byte-order mark FF FE (little-endian) or FE FF (big-endian) at the start (the Unicode
 * Standard, section 3.10, encoding schemes), or, without one, NUL bytes on one side of every byte pair
 * and none on the other: ASCII text in UTF-16. A run of NULs on both sides (a file
 * whose space was reserved before its bytes were written) is not text of any kind and
 * is left to the other checks. UTF-8 text never holds a NUL byte.
 */
export function utf16Form(head: Buffer): { form: 'little-endian' | 'big-endian'; shown: string } | null {
  if (head[0] === 0xff && head[1] === 0xfe) return { form: 'little-endian', shown: 'it starts with the byte-order mark FF FE' };
  if (head[0] === 0xfe && head[1] === 0xff) return { form: 'big-endian', shown: 'it starts with the byte-order mark FE FF' };
  const pairs = Math.floor(head.length / 2);
  let evenNul = 0;
  let oddNul = 0;
  for (let i = 0; i < pairs * 2; i += 2) {
    if (head[i] === NUL) evenNul++;
    if (head[i + 1] === NUL) oddNul++;
  }
  const shown = 'every other byte of its start is NUL';
  if (pairs > 0 && evenNul === 0 && oddNul * 2 > pairs) return { form: 'little-endian', shown };
  if (pairs > 0 && oddNul === 0 && evenNul * 2 > pairs) return { form: 'big-endian', shown };
  return null;
}

/** A rejection for a delivery whose first bytes are UTF-16; null when they are not. */
export function encodingRejection(head: Buffer, file: string): Rejection | null {
  const utf16 = utf16Form(head);
  if (utf16 === null) return null;
  return {
    code: 'unsupported_encoding',
    file,
    value: `UTF-16 ${utf16.form}`,
    expected: 'UTF-8 text',
    message: `is UTF-16 ${utf16.form} text (${utf16.shown}), not UTF-8; not loaded`,
    hint: 'save it as UTF-8 (in Excel as "CSV UTF-8"; in PowerShell with -Encoding utf8)',
    fixIn: 'file',
  };
}
