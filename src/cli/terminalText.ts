/**
 * Text from the data (ids, names, file names, error messages) can hold control
 * characters and bidirectional marks that a terminal would obey: move the cursor,
 * recolour, or show text in an order other than its bytes. Shown to a person, each
 * becomes a visible escape, \u{202e}; everything else is left as it is.
 */

// C0 controls but tab and newline, DEL and C1 controls, and the Unicode bidi controls
// (Unicode Standard Annex #9: ALM, LRM, RLM, LRE..RLO, LRI..PDI)
const UNSAFE = /[\u0000-\u0008\u000b-\u001f\u007f-\u009f\u061c\u200e\u200f\u202a-\u202e\u2066-\u2069]/g;
const UNSAFE_OR_LAYOUT = /[\u0000-\u001f\u007f-\u009f\u061c\u200e\u200f\u202a-\u202e\u2066-\u2069]/g;

const visible = (ch: string) => `\\u{${ch.codePointAt(0)!.toString(16)}}`;

/** For a message that may span lines: tab and newline stay, other controls are escaped. */
export function forTerminal(text: string): string {
  return text.replace(UNSAFE, visible);
}

/** For a table cell, which must stay on one line: tab and newline are escaped too. */
export function forTableCell(text: string): string {
  return text.replace(UNSAFE_OR_LAYOUT, visible);
}

// inside JSON strings these may stand as \uXXXX escapes: the same value, nothing a terminal obeys
const JSON_UNSAFE = /[\u007f-\u009f\u061c\u200e\u200f\u202a-\u202e\u2066-\u2069\u2028\u2029]/g;

/** JSON text with the characters JSON.stringify leaves raw (DEL, C1, bidi) as \uXXXX escapes. */
export function jsonForTerminal(json: string): string {
  return json.replace(JSON_UNSAFE, (ch) => `\\u${ch.charCodeAt(0).toString(16).padStart(4, '0')}`);
}
