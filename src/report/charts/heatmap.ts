import { escapeHtml } from '../format.ts';

export interface HeatmapSpec {
  id: string;
  title: string;
  labels: string[];
  /** Square matrix of values in [-1, 1]; NaN for "cannot be computed" (e.g. a flat price). */
  values: number[][];
}

const CELL = 46;
const LABEL_WIDTH = 150;
const TOP = 118;

// A diverging scale of our own: slate blue for -1, warm paper for 0, rust for +1.
const NEGATIVE = [47, 88, 128];
const NEUTRAL = [246, 243, 236];
const POSITIVE = [161, 72, 48];

/** Colour of a correlation: linear blend from the neutral colour towards the end colours. */
export function correlationColor(value: number): string {
  if (!Number.isFinite(value)) return '#d9d6cf';
  const t = Math.min(1, Math.abs(value));
  const end = value < 0 ? NEGATIVE : POSITIVE;
  const rgb = NEUTRAL.map((c, i) => Math.round(c + (end[i] - c) * t));
  return `rgb(${rgb.join(',')})`;
}

/** A correlation matrix as a grid of coloured cells with the value written in each. */
export function heatmap(spec: HeatmapSpec): string {
  const n = spec.labels.length;
  // room on the right for the last rotated column label
  const width = LABEL_WIDTH + n * CELL + 90;
  const height = TOP + n * CELL + 8;
  if (n === 0) {
    return `<svg class="chart empty" data-chart="${escapeHtml(spec.id)}" viewBox="0 0 400 60" xmlns="http://www.w3.org/2000/svg"><text class="empty-note" x="200" y="30" text-anchor="middle">Not enough holdings with returns.</text></svg>`;
  }
  const columnLabels = spec.labels.map((l, j) => {
    const cx = LABEL_WIDTH + j * CELL + CELL / 2;
    return `<text class="tick" transform="translate(${cx},${TOP - 6}) rotate(-50)">${escapeHtml(l)}</text>`;
  });
  const rows = spec.labels.map((label, i) => {
    const cy = TOP + i * CELL;
    const cells = spec.values[i].map((v, j) => {
      const cx = LABEL_WIDTH + j * CELL;
      const text = Number.isFinite(v) ? v.toFixed(2) : 'n/a';
      const ink = Number.isFinite(v) && Math.abs(v) > 0.55 ? '#ffffff' : '#2b2f33';
      return `<rect class="cell" x="${cx}" y="${cy}" width="${CELL - 2}" height="${CELL - 2}" fill="${correlationColor(v)}"><title>${escapeHtml(`${label} / ${spec.labels[j]}: ${text}`)}</title></rect><text class="cell-value" x="${cx + (CELL - 2) / 2}" y="${cy + (CELL - 2) / 2}" text-anchor="middle" dominant-baseline="middle" fill="${ink}">${text}</text>`;
    });
    return `<text class="tick" x="${LABEL_WIDTH - 8}" y="${cy + CELL / 2}" text-anchor="end" dominant-baseline="middle">${escapeHtml(label)}</text>${cells.join('')}`;
  });
  return [
    `<svg class="chart heatmap" data-chart="${escapeHtml(spec.id)}" viewBox="0 0 ${width} ${height}" style="max-width:${width}px" role="img" aria-label="${escapeHtml(spec.title)}" xmlns="http://www.w3.org/2000/svg">`,
    ...columnLabels,
    ...rows,
    '</svg>',
  ].join('\n');
}
