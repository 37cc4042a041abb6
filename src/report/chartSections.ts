import { barChart } from './charts/barChart.ts';
import { correlationColor, heatmap } from './charts/heatmap.ts';
import { legend, lineChart, type DateBand, type DateMarker, type LineSeries, type ReferenceLine } from './charts/lineChart.ts';
import { escapeHtml, formatPercent } from './format.ts';
import { estimateLabel } from '../labels.ts';
import type { Estimator } from '../config/schema.ts';
import type { ReportData } from './reportData.ts';
import { PALETTE } from './style.ts';

const pct1 = (v: number) => formatPercent(v, 1);

function section(title: string, lede: string, body: string, extraClass = ''): string {
  return `<section class="${extraClass}"><h2>${escapeHtml(title)}</h2><p class="lede">${lede}</p>${body}</section>`;
}

/** An estimate of risk_daily: a window's sample or shrunk covariance, or the EWMA (window 0). */
interface Estimate {
  estimator: Estimator;
  window: number;
}

const estimateName = (e: Estimate) => estimateLabel(e.estimator, e.window);

/** Limit and warning lines of the vol_ex_ante limits on these estimates: a limit is drawn only on the panel of the estimate it watches. */
function limitLines(data: ReportData, estimates: Estimate[]): ReferenceLine[] {
  const limits = data.limits.filter((l) => l.metric === 'vol_ex_ante' && estimates.some((e) => e.estimator === l.estimator && e.window === l.window));
  const many = limits.length > 1;
  return limits.flatMap((l) => {
    const tag = many ? ` ${estimateLabel(l.estimator, l.window)}` : '';
    return [
      { label: `limit${tag} ${pct1(l.limit)}`, value: l.limit, color: PALETTE.limit },
      { label: `warning${tag} ${pct1(l.warning)}`, value: l.warning, color: PALETTE.warning, dashed: true },
    ];
  });
}

function episodeBands(data: ReportData, metric: string, estimates: Estimate[]): DateBand[] {
  return data.breaches
    .filter((b) => b.metric === metric && !b.retracted && estimates.some((e) => e.estimator === b.estimator && e.window === b.window_days))
    .map((b) => ({
      from: b.opened_on,
      to: b.closed_on ?? data.asOf,
      label: `${b.level} episode ${b.opened_on} to ${b.closed_on ?? 'open'}`,
      color: b.level === 'breach' ? PALETTE.breachBand : PALETTE.warningBand,
    }));
}

/** The rebalance dates as ticks on a dated chart, and their legend line (none without a rebalance). */
function rebalanceMarkers(data: ReportData): DateMarker[] {
  return data.rebalances.map((date) => ({ date, label: `rebalance ${date}`, color: PALETTE.rebalance }));
}

function rebalanceKey(markers: DateMarker[]) {
  return markers.length ? [{ label: 'rebalance (new positions snapshot)', color: PALETTE.rebalance, kind: 'tick' as const }] : [];
}

function seriesOf(data: ReportData, estimator: Estimator, window: number, field: 'vol_ex_ante' | 'vol_realized') {
  return data.series
    .filter((p) => p.estimator === estimator && p.window_days === window)
    .map((p) => ({ date: p.date, value: p[field] }));
}

/**
 * One panel per window (its sample line, and its shrunk line where computed) and one for
 * the EWMA, on one scale: each panel carries only the limits and episodes of its own
 * estimates, so a limit line is never read against a window it does not apply to.
 */
export function volatilitySection(data: ReportData): string {
  const panels: { id: string; title: string; series: LineSeries[]; estimates: Estimate[] }[] = data.windows.map((w, i) => {
    const color = PALETTE.windows[i % PALETTE.windows.length];
    const series: LineSeries[] = [{ label: `${w}-day`, color, points: seriesOf(data, 'sample', w, 'vol_ex_ante') }];
    const shrunk = seriesOf(data, 'shrunk', w, 'vol_ex_ante');
    if (shrunk.length) series.push({ label: `${w}-day shrunk`, color, points: shrunk, dashed: true });
    return { id: `vol-ex-ante-${w}`, title: `${w}-day ex-ante volatility`, series, estimates: [{ estimator: 'sample', window: w }, { estimator: 'shrunk', window: w }] };
  });
  const ewma = seriesOf(data, 'ewma', 0, 'vol_ex_ante');
  if (ewma.length) {
    const series = [{ label: 'EWMA', color: PALETTE.ewma, points: ewma, dashed: true }];
    panels.push({ id: 'vol-ex-ante-ewma', title: 'EWMA ex-ante volatility', series, estimates: [{ estimator: 'ewma', window: 0 }] });
  }
  const top = Math.max(
    0,
    ...panels.flatMap((p) => p.series.flatMap((s) => s.points.map((x) => x.value ?? 0))),
    ...limitLines(data, panels.flatMap((p) => p.estimates)).map((r) => r.value),
  );
  const markers = rebalanceMarkers(data);
  const charts = panels.map((p) => {
    const references = limitLines(data, p.estimates);
    const bands = episodeBands(data, 'vol_ex_ante', p.estimates);
    // a panel whose line starts later (the longest window) shows and names only the rebalances on its dates
    const starts = p.series.flatMap((s) => s.points.slice(0, 1).map((x) => x.date));
    const shown = markers.filter((m) => starts.some((d) => d <= m.date));
    const chart = lineChart({ id: p.id, title: p.title, series: p.series, references, bands, markers: shown, formatValue: pct1, height: 170, yAtLeast: top });
    const key = legend([
      ...p.series.map((s) => ({ label: s.label, color: s.color, kind: s.dashed ? ('dashed' as const) : ('line' as const) })),
      ...references.map((r) => ({ label: r.label, color: r.color, kind: r.dashed ? ('dashed' as const) : ('line' as const) })),
      ...bands
        .filter((b, i) => bands.findIndex((o) => o.color === b.color) === i)
        .map((b) => ({ label: b.color === PALETTE.breachBand ? 'breach episode' : 'warning episode', color: b.color, kind: 'band' as const })),
      ...rebalanceKey(shown),
    ]);
    return `<h3>${escapeHtml(p.title)}</h3>${chart}${key}`;
  });
  return section(
    'Ex-ante volatility by window',
    `Annualized volatility from each window's covariance of daily log returns and the day's weights, from ${escapeHtml(data.chartFrom)} to ${escapeHtml(data.asOf)}, one panel per window on one scale. A panel shows only the mandate limits set on its own window and estimator; shaded: their episodes, from the day one opened to the day it closed. Ticks on the date axis: rebalances, the dates a new positions snapshot changed the holdings or their quantities.`,
    charts.join(''),
  );
}

export function realizedSection(data: ReportData): string {
  const w = data.focusWindow;
  const series: LineSeries[] = [
    { label: `ex-ante ${w}-day`, color: PALETTE.exAnte, points: seriesOf(data, 'sample', w, 'vol_ex_ante') },
    { label: `realized ${w}-day`, color: PALETTE.realized, points: seriesOf(data, 'sample', w, 'vol_realized') },
  ];
  const markers = rebalanceMarkers(data);
  const chart = lineChart({ id: 'vol-realized', title: `Realized against ex-ante volatility, ${w}-day`, series, markers, formatValue: pct1, height: 220 });
  return section(
    `Realized against ex-ante, ${w}-day`,
    'Ex-ante uses today\'s weights on the window\'s covariance; realized is the standard deviation of the portfolio\'s own daily returns over the same window. A wide gap means the holdings changed or correlations moved.',
    chart + legend([...series.map((s) => ({ label: s.label, color: s.color, kind: 'line' as const })), ...rebalanceKey(markers)]),
  );
}

export function contributionsSection(data: ReportData): string {
  const { rows, date } = data.contributions;
  const bars = rows
    .filter((r) => r.pct !== null)
    .map((r) => ({ label: r.security_id, detail: `(${r.name ? `${r.name}, ` : ''}weight ${formatPercent(r.weight, 1)})`, value: r.pct as number }));
  const chart = barChart({
    id: 'contributions',
    title: 'Contribution to risk by holding',
    bars,
    formatValue: pct1,
    color: PALETTE.barUp,
    negativeColor: PALETTE.barDown,
  });
  return section(
    'What drives the risk',
    `Share of the ${data.focusWindow}-day ex-ante volatility contributed by each holding on ${escapeHtml(date ?? 'n/a')} (Euler allocation: the shares add up to 100%; a negative share lowers the total).`,
    chart,
    'page-start',
  );
}

export function correlationSection(data: ReportData): string {
  const c = data.correlation;
  if ('error' in c) {
    return section('How the largest holdings move together', `No correlation matrix: ${escapeHtml(c.error)}.`, '');
  }
  // ids, not names, label the grid: they are short enough for rotated column labels
  const chart = heatmap({ id: 'correlation', title: 'Correlation of the largest holdings', labels: c.ids, values: c.values });
  const key = legend(
    [-1, -0.5, 0, 0.5, 1].map((v) => ({ label: v > 0 ? `+${v}` : String(v), color: correlationColor(v), kind: 'band' as const })),
  );
  return section(
    'How the largest holdings move together',
    `Correlation of daily log returns (base currency) of the ${c.ids.length} largest holdings by weight on ${escapeHtml(data.asOf)}, over the latest ${c.window} valuation dates (${c.observations} with a return for every one of them).`,
    chart + key,
  );
}
