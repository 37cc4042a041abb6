import { cell, escapeHtml, formatMoney, formatNumber, formatPercent, table } from './format.ts';
import { estimateLabel } from '../labels.ts';
import type { ReportData } from './reportData.ts';


/** Value and weight by asset class and by currency on the report's date, with the concentration figures. */
export function exposureSection(data: ReportData): string {
  const { buckets, concentration } = data.exposure;
  const part = (dimension: 'asset_class' | 'currency', title: string) =>
    `<h3>${escapeHtml(title)}</h3>${table(
      [dimension === 'asset_class' ? 'asset class' : 'currency', `value (${data.baseCurrency})`, 'weight'],
      new Set([1, 2]),
      buckets.filter((b) => b.dimension === dimension).map((b) => [cell(b.bucket), cell(formatMoney(b.value_base), true), cell(formatPercent(b.weight, 1), true)]),
    )}`;
  const concentrationNote = concentration
    ? `Largest 10 holdings: ${formatPercent(concentration.largest_10_weight, 1)} of value; effective number of holdings (1 / Σ w²): ${formatNumber(concentration.effective_holdings, 1)} of ${concentration.n_positions} positions.`
    : 'No concentration figures for this date.';
  return `<section data-section="exposures"><h2>Exposures on ${escapeHtml(data.asOf)}</h2><p class="lede">Value and weight by asset class (from the securities file; unclassified where it gives none) and by the currency each holding is priced in, cash included. ${escapeHtml(concentrationNote)}</p>${part('asset_class', 'By asset class')}${part('currency', 'By currency')}</section>`;
}

/** Tracking error and beta by window, and the largest contributors to the tracking error; nothing without a benchmark. */
export function benchmarkSection(data: ReportData): string {
  const benchmark = data.exposure.benchmark;
  if (!benchmark) return '';
  const windows = table(
    ['window', 'tracking error ex ante', 'tracking error realized', 'beta'],
    new Set([1, 2, 3]),
    benchmark.byWindow.map((r) => [
      cell(estimateLabel(r.estimator, r.window_days)),
      cell(formatPercent(r.tracking_error_ex_ante), true),
      cell(formatPercent(r.tracking_error_realized), true),
      cell(formatNumber(r.beta_to_benchmark), true),
    ]),
  );
  const { contributions } = benchmark;
  const active =
    contributions.rows.length === 0
      ? '<p class="lede">No active contributions are stored for the latest date.</p>'
      : `<h3>${escapeHtml(`Largest contributors to the ${data.focusWindow}-day tracking error on ${contributions.date}`)}</h3>${table(
          ['security', 'weight', 'benchmark weight', 'active weight', 'share of tracking error'],
          new Set([1, 2, 3, 4]),
          contributions.rows.map((r) => [
            cell(r.security_id),
            cell(formatPercent(r.weight, 1), true),
            cell(formatPercent(r.benchmark_weight, 1), true),
            cell(formatPercent(r.active_weight, 1), true),
            cell(formatPercent(r.pct, 1), true),
          ]),
        )}`;
  return `<section data-section="benchmark"><h2>${escapeHtml(`Against the benchmark ${benchmark.id}`)}</h2><p class="lede">Tracking error ex ante = sqrt(A (w − b)′ S (w − b)) with the window's covariance; realized = sqrt(A) × the standard deviation of the portfolio's return minus the benchmark's over the window; beta = w′Sb / b′Sb. Annualized.</p>${windows}${active}</section>`;
}
