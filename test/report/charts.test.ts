import { describe, expect, it } from 'vitest';
import { barChart } from '../../src/report/charts/barChart.ts';
import { correlationColor, heatmap } from '../../src/report/charts/heatmap.ts';
import { lineChart } from '../../src/report/charts/lineChart.ts';
import { linearScale, monthLabel, monthTicks, niceTicks } from '../../src/report/charts/scale.ts';
import { escapeHtml, formatMoney, formatPercent } from '../../src/report/format.ts';

describe('scales', () => {
  it('niceTicks steps by 1, 2 or 5 times a power of ten and covers the range', () => {
    expect(niceTicks(0, 0.23, 5)).toEqual([0, 0.05, 0.1, 0.15, 0.2, 0.25]);
    expect(niceTicks(-0.05, 0.34, 5)).toEqual([-0.1, 0, 0.1, 0.2, 0.3, 0.4]);
    expect(niceTicks(3, 3)).toEqual([3]);
  });
  it('linearScale maps the ends of the domain onto the ends of the range', () => {
    const s = linearScale([0, 0.2], [200, 10]);
    expect(s(0)).toBe(200);
    expect(s(0.2)).toBeCloseTo(10, 12);
    expect(linearScale([5, 5], [0, 100])(5)).toBe(50);
  });
  it('monthTicks keeps calendar quarters over two years (ISO 8601 month starts)', () => {
    const ticks = monthTicks('2024-01-15', '2025-12-31', 8);
    expect(ticks).toEqual(['2024-04-01', '2024-07-01', '2024-10-01', '2025-01-01', '2025-04-01', '2025-07-01', '2025-10-01']);
    expect(monthLabel('2025-07-01')).toBe('Jul 2025');
  });
});

describe('formatting', () => {
  it('shows a missing figure as n/a, never as zero', () => {
    expect(formatPercent(null)).toBe('n/a');
    expect(formatPercent(0.1534)).toBe('15.34%');
    expect(formatMoney(Number.NaN)).toBe('n/a');
    expect(formatMoney(1234567.8)).toBe('1,234,568');
  });
  it('escapes markup in names from custodian files', () => {
    expect(escapeHtml(`<b>"A&B"</b>`)).toBe('&lt;b&gt;&quot;A&amp;B&quot;&lt;/b&gt;');
  });
});

describe('lineChart', () => {
  const points = ['2025-01-02', '2025-01-03', '2025-01-06', '2025-01-07', '2025-01-08'].map((date, i) => ({
    date,
    value: i === 2 ? null : 0.1 + i * 0.01,
  }));

  it('breaks the line at a missing value instead of bridging it', () => {
    const svg = lineChart({ id: 't', title: 'T', series: [{ label: 'a', color: '#000', points }], formatValue: String });
    const lines = svg.match(/<polyline[^>]*points="([^"]*)"/g) ?? [];
    expect(lines).toHaveLength(2);
    expect(lines.map((l) => /points="([^"]*)"/.exec(l)![1].split(' ').length)).toEqual([2, 2]);
  });

  it('places a reference line at its value and a band over its dates', () => {
    const svg = lineChart({
      id: 't',
      title: 'T',
      series: [{ label: 'a', color: '#000', points }],
      references: [{ label: 'limit', value: 0.12, color: '#f00' }],
      bands: [{ from: '2025-01-03', to: '2025-01-07', label: 'episode', color: '#fee' }],
      formatValue: String,
      height: 250,
    });
    const band = /<rect class="band" x="([\d.]+)" y="\d+" width="([\d.]+)"/.exec(svg)!;
    expect(Number(band[2])).toBeGreaterThan(100);
    // y axis 0..0.15 (ticks of 0.05) drawn from y 224 (bottom) to 12 (top): 0.12 sits at 224 - 0.8 * 212
    const ref = /<line class="reference" x1="\d+" x2="\d+" y1="([\d.]+)"/.exec(svg)!;
    expect(Number(ref[1])).toBeCloseTo(224 - 0.8 * 212, 0);
  });

  it('says so when there is nothing to draw', () => {
    expect(lineChart({ id: 'e', title: 'E', series: [], formatValue: String })).toContain('No figures');
  });
});

describe('barChart', () => {
  it('draws a negative contribution to the left of the zero line', () => {
    const svg = barChart({
      id: 'b',
      title: 'B',
      bars: [
        { label: 'EQ-UP', detail: 'w 50%', value: 0.8 },
        { label: 'BD-DOWN', detail: 'w 50%', value: -0.2 },
      ],
      formatValue: String,
      color: '#111',
      negativeColor: '#222',
    });
    const rects = [...svg.matchAll(/<rect class="bar" x="([\d.]+)" y="[\d.]+" width="([\d.]+)"[^>]*fill="(#\d+)"/g)];
    const zero = Number(/<line class="axis" x1="([\d.]+)"/.exec(svg)![1]);
    expect(Number(rects[0][1])).toBeCloseTo(zero, 0);
    expect(Number(rects[1][1]) + Number(rects[1][2])).toBeCloseTo(zero, 0);
    expect(Number(rects[0][2]) / Number(rects[1][2])).toBeCloseTo(4, 1);
    expect(rects[1][3]).toBe('#222');
  });
});

describe('heatmap', () => {
  it('colours -1, 0 and +1 with the two ends and the neutral middle of its scale', () => {
    expect(correlationColor(0)).toBe('rgb(246,243,236)');
    expect(correlationColor(1)).toBe('rgb(161,72,48)');
    expect(correlationColor(-1)).toBe('rgb(47,88,128)');
    expect(correlationColor(Number.NaN)).toBe('#d9d6cf');
  });
  it('draws n x n cells with their values', () => {
    const svg = heatmap({ id: 'h', title: 'H', labels: ['A', 'B'], values: [[1, -0.25], [-0.25, 1]] });
    expect(svg.match(/<rect class="cell"/g)).toHaveLength(4);
    expect(svg).toContain('>-0.25<');
  });
});
