/** Scales and tick choices for the report's SVG charts. */

export type Scale = (value: number) => number;

/** Maps [d0, d1] onto [r0, r1]; a zero-width domain maps to the middle of the range. */
export function linearScale([d0, d1]: [number, number], [r0, r1]: [number, number]): Scale {
  if (d1 === d0) return () => (r0 + r1) / 2;
  const k = (r1 - r0) / (d1 - d0);
  return (v) => r0 + (v - d0) * k;
}

/** About `count` round ticks (steps of 1, 2 or 5 times a power of ten), the first at or below min, the last at or above max. */
export function niceTicks(min: number, max: number, count = 5): number[] {
  if (!Number.isFinite(min) || !Number.isFinite(max)) return [];
  if (max === min) return [min];
  const raw = (max - min) / count;
  const power = 10 ** Math.floor(Math.log10(raw));
  const step = [1, 2, 5, 10].map((m) => m * power).find((s) => s >= raw) ?? 10 * power;
  const out: number[] = [];
  // toPrecision trims float noise (3 * 0.05 = 0.15000000000000002) so labels and tests see round numbers; "+ 0" turns -0 into 0
  for (let i = Math.floor(min / step + 1e-9); i <= Math.ceil(max / step - 1e-9); i++) out.push(Number((i * step).toPrecision(12)) + 0);
  return out;
}

/** Midnight UTC of an ISO 8601 date, in milliseconds. */
export function dayTime(date: string): number {
  return Date.parse(`${date}T00:00:00Z`);
}

/** First days of months between two dates, thinned to at most maxTicks (steps of 1, 2, 3, 6 or 12 months). */
export function monthTicks(first: string, last: string, maxTicks = 8): string[] {
  const start = new Date(dayTime(first));
  let year = start.getUTCFullYear();
  let month = start.getUTCMonth() + (start.getUTCDate() === 1 ? 0 : 1);
  const months: string[] = [];
  for (;;) {
    year += Math.floor(month / 12);
    month %= 12;
    const iso = `${year}-${String(month + 1).padStart(2, '0')}-01`;
    if (iso > last) break;
    months.push(iso);
    month++;
  }
  const step = [1, 2, 3, 6, 12].find((s) => Math.ceil(months.length / s) <= maxTicks) ?? 12;
  // keep months on calendar boundaries (quarters, halves, years) rather than every nth from the start
  return months.filter((m) => (Number(m.slice(5, 7)) - 1) % step === 0);
}

/** "2026-03-01" -> "Mar 2026" in English, independent of the machine's locale. */
export function monthLabel(iso: string): string {
  const names = ['Jan', 'Feb', 'Mar', 'Apr', 'May', 'Jun', 'Jul', 'Aug', 'Sep', 'Oct', 'Nov', 'Dec'];
  return `${names[Number(iso.slice(5, 7)) - 1]} ${iso.slice(0, 4)}`;
}
