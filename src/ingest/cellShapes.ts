/**
 * What the text of one cell looks like, before any config reads it: a date in a shape
 * senders commonly use, a plain number. The hints (hints.ts) and the header check
 * (header.ts) both ask; the typed checks of the rows stay in rules.ts.
 */

/** Date shapes a sender commonly uses, with the strptime format that reads each (common practice, no source). */
const DATE_SHAPES: { shape: RegExp; formats: (parts: number[]) => string[] }[] = [
  { shape: /^(\d{4})-(\d{1,2})-(\d{1,2})$/, formats: () => ['%Y-%m-%d'] },
  { shape: /^(\d{4})\/(\d{1,2})\/(\d{1,2})$/, formats: () => ['%Y/%m/%d'] },
  { shape: /^(\d{4})(\d{2})(\d{2})$/, formats: () => ['%Y%m%d'] },
  { shape: /^(\d{1,2})\.(\d{1,2})\.(\d{4})$/, formats: () => ['%d.%m.%Y'] },
  { shape: /^(\d{1,2})\/(\d{1,2})\/(\d{4})$/, formats: (p) => dayOrMonthFirst(p, '/') },
  { shape: /^(\d{1,2})-(\d{1,2})-(\d{4})$/, formats: (p) => dayOrMonthFirst(p, '-') },
];

/** 13/04/2026 can only be day first, 04/13/2026 only month first; 04/05/2026 either. */
function dayOrMonthFirst([first, second]: number[], sep: string): string[] {
  const dayFirst = `%d${sep}%m${sep}%Y`;
  const monthFirst = `%m${sep}%d${sep}%Y`;
  if (first > 12) return [dayFirst];
  if (second > 12) return [monthFirst];
  return [dayFirst, monthFirst];
}

/** The strptime formats that could read `text` as a date; empty when it has no common date shape. */
export function dateFormatsOf(text: string): string[] {
  const trimmed = text.trim();
  const match = DATE_SHAPES.map((d) => ({ m: d.shape.exec(trimmed), d })).find((x) => x.m !== null);
  return match ? match.d.formats(match.m!.slice(1).map(Number)) : [];
}

/** Digits with an optional sign and one decimal point or comma: 50.3, -12, 0,75. */
export function looksLikeNumber(text: string): boolean {
  return /^[+-]?(\d+([.,]\d+)?|[.,]\d+)$/.test(text.trim());
}
