import { escapeHtml } from '../format.ts';
import { linearScale, niceTicks } from './scale.ts';

export interface Bar {
  label: string;
  /** Shown after the value and in the tooltip, e.g. the weight. */
  detail: string;
  value: number;
}

export interface BarChartSpec {
  id: string;
  title: string;
  bars: Bar[];
  formatValue: (v: number) => string;
  color: string;
  /** Colour of bars below zero (a holding that lowers the portfolio's risk). */
  negativeColor: string;
  width?: number;
}

const ROW = 22;
const LABEL_WIDTH = 250;
const MARGIN = { top: 8, right: 130, bottom: 24 };

/** Horizontal bars around a zero line, one row per item, in the order given. */
export function barChart(spec: BarChartSpec): string {
  const width = spec.width ?? 880;
  const height = MARGIN.top + spec.bars.length * ROW + MARGIN.bottom;
  if (spec.bars.length === 0) {
    return `<svg class="chart empty" data-chart="${escapeHtml(spec.id)}" viewBox="0 0 ${width} 60" xmlns="http://www.w3.org/2000/svg"><text class="empty-note" x="${width / 2}" y="30" text-anchor="middle">No contributions for this date.</text></svg>`;
  }
  const values = spec.bars.map((b) => b.value);
  const ticks = niceTicks(Math.min(0, ...values), Math.max(0, ...values), 5);
  const x = linearScale([ticks[0], ticks[ticks.length - 1]], [LABEL_WIDTH, width - MARGIN.right]);
  const zero = x(0);
  const bottom = height - MARGIN.bottom;
  const grid = ticks.map(
    (t) =>
      `<line class="grid" x1="${x(t).toFixed(1)}" x2="${x(t).toFixed(1)}" y1="${MARGIN.top}" y2="${bottom}"/><text class="tick" x="${x(t).toFixed(1)}" y="${bottom + 15}" text-anchor="middle">${escapeHtml(spec.formatValue(t))}</text>`,
  );
  const rows = spec.bars.map((b, i) => {
    const top = MARGIN.top + i * ROW;
    const end = x(b.value);
    const left = Math.min(zero, end);
    const barWidth = Math.max(Math.abs(end - zero), 1);
    const color = b.value < 0 ? spec.negativeColor : spec.color;
    // the value is written right of the bar, or right of the zero line for a negative bar, so it never runs into the labels
    const valueX = Math.max(zero, end) + 4;
    return [
      `<text class="bar-label" x="${LABEL_WIDTH - 8}" y="${top + ROW / 2}" text-anchor="end" dominant-baseline="middle">${escapeHtml(b.label)}</text>`,
      `<rect class="bar" x="${left.toFixed(1)}" y="${top + 4}" width="${barWidth.toFixed(1)}" height="${ROW - 8}" fill="${color}"><title>${escapeHtml(`${b.label}: ${spec.formatValue(b.value)} (${b.detail})`)}</title></rect>`,
      `<text class="bar-value" x="${valueX.toFixed(1)}" y="${top + ROW / 2}" dominant-baseline="middle">${escapeHtml(spec.formatValue(b.value))} <tspan class="bar-detail">${escapeHtml(b.detail)}</tspan></text>`,
    ].join('');
  });
  return [
    `<svg class="chart" data-chart="${escapeHtml(spec.id)}" viewBox="0 0 ${width} ${height}" role="img" aria-label="${escapeHtml(spec.title)}" xmlns="http://www.w3.org/2000/svg">`,
    ...grid,
    ...rows,
    `<line class="axis" x1="${zero.toFixed(1)}" x2="${zero.toFixed(1)}" y1="${MARGIN.top}" y2="${bottom}"/>`,
    '</svg>',
  ].join('\n');
}
