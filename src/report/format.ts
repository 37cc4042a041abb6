import { isCountMetric } from '../limits/applicableLimits.ts';
/** Text helpers shared by the HTML report and the demo's terminal summary. */

const HTML_ESCAPES: Record<string, string> = { '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' };

/** Escapes text for HTML content and attribute values (ids and names come from custodian files). */
export function escapeHtml(text: string): string {
  return text.replace(/[&<>"']/g, (c) => HTML_ESCAPES[c]);
}

/** 0.1534 -> "15.34%"; null -> "n/a" (a missing figure is shown as missing, never as 0). */
export function formatPercent(fraction: number | null | undefined, digits = 2): string {
  return fraction === null || fraction === undefined || !Number.isFinite(fraction) ? 'n/a' : `${(fraction * 100).toFixed(digits)}%`;
}

/** 1234567.8 -> "1,234,568" (whole units of the base currency, grouped for reading). */
export function formatMoney(value: number | null | undefined): string {
  if (value === null || value === undefined || !Number.isFinite(value)) return 'n/a';
  return Math.round(value).toLocaleString('en-US');
}

export function formatNumber(value: number | null | undefined, digits = 2): string {
  return value === null || value === undefined || !Number.isFinite(value) ? 'n/a' : value.toFixed(digits);
}

/** A table cell of text; numeric ones are right-aligned by the page's style. */
export const cell = (text: string, num = false) => `<td${num ? ' class="num"' : ''}>${escapeHtml(text)}</td>`;

/** A table with a header row; the columns in numeric are right-aligned. Rows are lists of ready cells. */
export const table = (labels: string[], numeric: ReadonlySet<number>, rows: string[][]) =>
  `<table><thead><tr>${labels.map((l, i) => `<th${numeric.has(i) ? ' class="num"' : ''}>${escapeHtml(l)}</th>`).join('')}</tr></thead><tbody>${rows
    .map((r) => `<tr>${r.join('')}</tr>`)
    .join('')}</tbody></table>`;

/** A limit level or episode peak: a fraction as a percentage, a count metric's value as a count. */
export function formatLimitFigure(metric: string, value: number | null, digits?: number): string {
  if (value === null) return 'n/a';
  return isCountMetric(metric) ? String(value) : formatPercent(value, digits);
}

