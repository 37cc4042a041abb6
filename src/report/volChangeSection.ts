import { volChangeSentence } from '../limits/volChangeText.ts';
import { barChart } from './charts/barChart.ts';
import { legend, lineChart, type LinePoint, type LineSeries } from './charts/lineChart.ts';
import { escapeHtml, formatPercent } from './format.ts';
import type { ReportData } from './reportData.ts';
import { PALETTE } from './style.ts';

const HOLDINGS_SHOWN = 10;
/** Signed percentage points, 2 decimals; a rounding-level value reads 0.00, never -0.00. */
const points = (v: number) => {
  const text = (v * 100).toFixed(2);
  return `${v > 0 && text !== '0.00' ? '+' : ''}${text === '-0.00' ? '0.00' : text} pt`;
};

/**
 * Why the focus window's ex-ante volatility moved: the daily split (vol_change) summed
 * over the charts' dates into a part from the market and a part from the weights, the
 * latest day in words, and that day's weights part per holding.
 */
export function volChangeSection(data: ReportData): string {
  const { window, points: days, latest, holdings } = data.volChange;
  const title = `Why the ${window}-day volatility moved`;
  if (days.length === 0) {
    return `<section><h2>${escapeHtml(title)}</h2><p class="lede">No day-to-day split yet: it needs a volatility on two consecutive valuation dates.</p></section>`;
  }
  let market = 0;
  let weights = 0;
  const series: LineSeries[] = [
    { label: 'from the market (covariance)', color: PALETTE.exAnte, points: [] },
    { label: 'from the weights (trades and drift)', color: PALETTE.realized, points: [] },
    { label: 'total change', color: PALETTE.ink, points: [], dashed: true },
  ];
  for (const day of days) {
    // a day without a split (history broken) adds nothing and breaks no line
    if (day.from_market !== null && day.from_weights !== null) {
      market += day.from_market;
      weights += day.from_weights;
    }
    const at = (value: number): LinePoint => ({ date: day.date, value });
    series[0].points.push(at(market));
    series[1].points.push(at(weights));
    series[2].points.push(at(market + weights));
  }
  const chart = lineChart({ id: 'vol-change', title, series, formatValue: points, height: 220 });
  const key = legend(series.map((s) => ({ label: s.label, color: s.color, kind: s.dashed ? ('dashed' as const) : ('line' as const) })));
  const today =
    latest && latest.from_weights !== null
      ? `<p>${escapeHtml(volChangeSentence(`On ${data.asOf} the ${window}-day volatility moved`, { ...latest, vol_prev: latest.vol_prev!, vol_now: latest.vol_now!, from_weights: latest.from_weights, from_market: latest.from_market! }))}.</p>`
      : '';
  const bars = holdings.slice(0, HOLDINGS_SHOWN).map((h) => ({
    label: h.name ?? h.security_id,
    detail: `(weight ${formatPercent(h.weight_prev, 1)} to ${formatPercent(h.weight_now, 1)})`,
    value: h.from_weights,
  }));
  const perHolding = bars.length
    ? barChart({ id: 'vol-change-holdings', title: 'Weights part by holding', bars, formatValue: points, color: PALETTE.barUp, negativeColor: PALETTE.barDown })
    : '';
  return `<section><h2>${escapeHtml(title)}</h2><p class="lede">${escapeHtml(
    `Each day's change in the ${window}-day ex-ante volatility split into a part from the market (the covariance moved) and a part from the weights (trades and price drift), averaging both orders of the two steps; summed from ${days[0].date} on, in percentage points. The bars split the latest day's weights part by holding: its weight change times its marginal risk. An estimate's split, not a cause.`,
  )}</p>${chart}${key}${today}${perHolding}</section>`;
}
