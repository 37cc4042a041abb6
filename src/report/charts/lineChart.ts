import { escapeHtml } from '../format.ts';
import { dayTime, linearScale, monthLabel, monthTicks, niceTicks } from './scale.ts';

export interface LinePoint {
  date: string;
  value: number | null;
}

export interface LineSeries {
  label: string;
  color: string;
  points: LinePoint[];
  dashed?: boolean;
}

/** A horizontal line across the plot, e.g. a limit. */
export interface ReferenceLine {
  label: string;
  value: number;
  color: string;
  dashed?: boolean;
}

/** A shaded stretch of dates, e.g. a breach episode (`to` inclusive). */
export interface DateBand {
  from: string;
  to: string;
  label: string;
  color: string;
}

/** A dated event drawn as a short tick rising from the date axis, e.g. a rebalance. */
export interface DateMarker {
  date: string;
  label: string;
  color: string;
}

export interface LineChartSpec {
  /** Goes into data-chart, so a page test can find the chart. */
  id: string;
  title: string;
  series: LineSeries[];
  references?: ReferenceLine[];
  bands?: DateBand[];
  markers?: DateMarker[];
  formatValue: (v: number) => string;
  width?: number;
  height?: number;
  /** The top of the y axis at least this (panels of one figure share a scale). */
  yAtLeast?: number;
}

const MARGIN = { top: 12, right: 96, bottom: 26, left: 52 };
const LABEL_GAP = 13;
const MARKER_HEIGHT = 14;

/**
 * A dated line chart as inline SVG. A null value breaks the line (a gap in the data is
 * shown as a gap, not bridged); the y axis starts at zero, so a risk figure is seen
 * against nothing, or below it when a series (a change) goes negative.
 */
export function lineChart(spec: LineChartSpec): string {
  const width = spec.width ?? 880;
  const height = spec.height ?? 250;
  const dates = spec.series.flatMap((s) => s.points.map((p) => p.date)).sort();
  if (dates.length === 0) return emptyChart(spec, width, height);
  const first = dates[0];
  const last = dates[dates.length - 1];
  const values = [
    ...spec.series.flatMap((s) => s.points.map((p) => p.value).filter((v): v is number => v !== null && Number.isFinite(v))),
    ...(spec.references ?? []).map((r) => r.value),
  ];
  const yTicks = niceTicks(Math.min(0, ...values), Math.max(...values, spec.yAtLeast ?? 0, 1e-9), 5);
  const x = linearScale([dayTime(first), dayTime(last)], [MARGIN.left, width - MARGIN.right]);
  const y = linearScale([yTicks[0], yTicks[yTicks.length - 1]], [height - MARGIN.bottom, MARGIN.top]);
  const xOf = (date: string) => x(dayTime(date)).toFixed(1);
  const yOf = (v: number) => y(v).toFixed(1);

  const bands = (spec.bands ?? []).filter((b) => b.to >= first && b.from <= last).map((b) => {
    const x0 = x(dayTime(b.from < first ? first : b.from));
    const x1 = x(dayTime(b.to > last ? last : b.to));
    return `<rect class="band" x="${x0.toFixed(1)}" y="${MARGIN.top}" width="${Math.max(x1 - x0, 1.5).toFixed(1)}" height="${height - MARGIN.top - MARGIN.bottom}" fill="${b.color}"><title>${escapeHtml(b.label)}</title></rect>`;
  });
  const markerTop = height - MARGIN.bottom - MARKER_HEIGHT;
  const markers = (spec.markers ?? []).filter((m) => m.date >= first && m.date <= last).map(
    (m) =>
      `<line class="marker" x1="${xOf(m.date)}" x2="${xOf(m.date)}" y1="${markerTop}" y2="${height - MARGIN.bottom}" stroke="${m.color}"><title>${escapeHtml(m.label)}</title></line>`,
  );
  const grid = yTicks.map(
    (t) =>
      `<line class="grid" x1="${MARGIN.left}" x2="${width - MARGIN.right}" y1="${yOf(t)}" y2="${yOf(t)}"/><text class="tick" x="${MARGIN.left - 6}" y="${yOf(t)}" text-anchor="end" dominant-baseline="middle">${escapeHtml(spec.formatValue(t))}</text>`,
  );
  const xTicks = monthTicks(first, last).map(
    (m) =>
      `<line class="axis" x1="${xOf(m)}" x2="${xOf(m)}" y1="${height - MARGIN.bottom}" y2="${height - MARGIN.bottom + 4}"/><text class="tick" x="${xOf(m)}" y="${height - MARGIN.bottom + 16}" text-anchor="middle">${monthLabel(m)}</text>`,
  );
  const labelY = spreadLabels((spec.references ?? []).map((r) => y(r.value)));
  const references = (spec.references ?? []).map(
    (r, i) =>
      `<line class="reference" x1="${MARGIN.left}" x2="${width - MARGIN.right}" y1="${yOf(r.value)}" y2="${yOf(r.value)}" stroke="${r.color}"${r.dashed ? ' stroke-dasharray="5 4"' : ''}/><text class="reference-label" x="${width - MARGIN.right + 6}" y="${labelY[i].toFixed(1)}" dominant-baseline="middle" fill="${r.color}">${escapeHtml(r.label)}</text>`,
  );
  const lines = spec.series.flatMap((s) =>
    segments(s.points).map(
      (seg) =>
        `<polyline class="series" data-series="${escapeHtml(s.label)}" fill="none" stroke="${s.color}"${s.dashed ? ' stroke-dasharray="4 3"' : ''} points="${seg.map((p) => `${xOf(p.date)},${yOf(p.value)}`).join(' ')}"/>`,
    ),
  );
  return [
    `<svg class="chart" data-chart="${escapeHtml(spec.id)}" viewBox="0 0 ${width} ${height}" role="img" aria-label="${escapeHtml(spec.title)}" xmlns="http://www.w3.org/2000/svg">`,
    ...bands,
    ...grid,
    `<line class="axis" x1="${MARGIN.left}" x2="${width - MARGIN.right}" y1="${height - MARGIN.bottom}" y2="${height - MARGIN.bottom}"/>`,
    ...xTicks,
    ...references,
    ...lines,
    ...markers,
    '</svg>',
  ].join('\n');
}

/** Label positions at least LABEL_GAP apart (a limit and its warning are often close), keeping their order. */
function spreadLabels(ys: number[]): number[] {
  const order = ys.map((_, i) => i).sort((a, b) => ys[a] - ys[b]);
  const out = [...ys];
  for (let k = 1; k < order.length; k++) {
    const prev = out[order[k - 1]];
    if (out[order[k]] - prev < LABEL_GAP) out[order[k]] = prev + LABEL_GAP;
  }
  return out;
}

/** Runs of consecutive non-null points; an isolated point becomes a zero-length line, drawn as a dot by the round line caps. */
function segments(points: LinePoint[]): { date: string; value: number }[][] {
  const out: { date: string; value: number }[][] = [];
  let current: { date: string; value: number }[] = [];
  for (const p of [...points].sort((a, b) => a.date.localeCompare(b.date))) {
    if (p.value === null || !Number.isFinite(p.value)) {
      if (current.length) out.push(current);
      current = [];
    } else {
      current.push({ date: p.date, value: p.value });
    }
  }
  if (current.length) out.push(current);
  return out.map((seg) => (seg.length === 1 ? [seg[0], seg[0]] : seg));
}

function emptyChart(spec: LineChartSpec, width: number, height: number): string {
  return `<svg class="chart empty" data-chart="${escapeHtml(spec.id)}" viewBox="0 0 ${width} ${height}" xmlns="http://www.w3.org/2000/svg"><text class="empty-note" x="${width / 2}" y="${height / 2}" text-anchor="middle">No figures for this chart yet.</text></svg>`;
}

/** A legend in HTML (wraps and prints better than text inside the SVG). */
export function legend(items: { label: string; color: string; kind: 'line' | 'dashed' | 'band' | 'tick' }[]): string {
  const entries = items.map(
    (i) => `<span class="legend-item"><span class="swatch swatch-${i.kind}" style="--swatch:${i.color}"></span>${escapeHtml(i.label)}</span>`,
  );
  return `<div class="legend">${entries.join('')}</div>`;
}
