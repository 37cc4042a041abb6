import { legend, lineChart, type LineSeries } from './charts/lineChart.ts';
import { escapeHtml, formatMoney, formatNumber, formatPercent } from './format.ts';
import { varMethodLabel } from '../labels.ts';
import type { LossData } from './lossData.ts';
import type { ReportData } from './reportData.ts';
import { PALETTE } from './style.ts';

/**
 * The report's loss section: VaR and ES by method side by side, the backtest (P&L
 * against the VaR predicted the day before, exceptions marked, the zone) and the
 * stress table.
 */

const cell = (text: string, num = false) => `<td${num ? ' class="num"' : ''}>${escapeHtml(text)}</td>`;
const table = (labels: string[], numeric: ReadonlySet<number>, rows: string[][]) =>
  `<table><thead><tr>${labels.map((l, i) => `<th${numeric.has(i) ? ' class="num"' : ''}>${escapeHtml(l)}</th>`).join('')}</tr></thead><tbody>${rows
    .map((r) => `<tr>${r.join('')}</tr>`)
    .join('')}</tbody></table>`;


export function lossSection(data: ReportData): string {
  const { losses } = data;
  return `<section class="page-start"><h2>Losses beyond the normal model</h2><p class="lede">VaR 99% and expected shortfall 97.5% over one day in ${escapeHtml(
    data.baseCurrency,
  )} on ${escapeHtml(data.asOf)}, by method. Normal: from the volatility above. Historical: today's holdings revalued under each of the last N days' returns. Filtered historical: the same, each past return rescaled to today's volatility of its security (EWMA). Historical figures repeat only what their window saw.</p>${methodsTable(losses)}</section>
${backtestSection(data)}
${stressSection(data)}`;
}

function methodsTable(losses: LossData): string {
  if (losses.methods.length === 0) return '<p class="lede">No loss figures for this date yet.</p>';
  return table(
    ['method', 'VaR 99% 1d', 'ES 97.5% 1d', 'coverage', 'status'],
    new Set([1, 2, 3]),
    losses.methods.map((r) => [
      cell(varMethodLabel(r)),
      cell(formatMoney(r.var_99_1d), true),
      cell(formatMoney(r.es_975_1d), true),
      cell(formatPercent(r.coverage, 1), true),
      cell(r.status),
    ]),
  );
}

function backtestSection(data: ReportData): string {
  const { chart, backtests } = data.losses;
  const loss: LineSeries = { label: 'loss of the day (holdings)', color: PALETTE.realized, points: chart.points.map((p) => ({ date: p.date, value: -p.pnl })) };
  const predicted: LineSeries = {
    label: `99% VaR (${varMethodLabel({ method: 'normal', window_days: chart.window, estimator: 'sample' })}), predicted the day before`,
    color: PALETTE.exAnte,
    points: chart.points.map((p) => ({ date: p.date, value: p.var_99_1d })),
  };
  const bands = chart.points
    .filter((p) => p.exception)
    .map((p) => ({ from: p.date, to: p.date, label: `exception on ${p.date}: loss ${formatMoney(-p.pnl)} > VaR ${formatMoney(p.var_99_1d)}`, color: PALETTE.breachBand }));
  const drawn =
    chart.points.length === 0
      ? '<p class="lede">No tested day in the chart\'s range yet.</p>'
      : lineChart({ id: 'backtest', title: 'Daily loss against the VaR predicted the day before', series: [loss, predicted], bands, formatValue: formatMoney, height: 240 }) +
        legend([
          { label: loss.label, color: loss.color, kind: 'line' },
          { label: predicted.label, color: predicted.color, kind: 'line' },
          { label: 'exception (loss above VaR)', color: PALETTE.breachBand, kind: 'band' },
        ]);
  const rows = backtests.map((b) => [
    cell(varMethodLabel(b)),
    cell(String(b.tested_days), true),
    cell(String(b.exceptions_250), true),
    cell(formatNumber(b.kupiec_lr), true),
    cell(formatNumber(b.kupiec_p, 3), true),
    cell(formatNumber(b.christoffersen_p, 3), true),
    cell(b.zone ?? 'n/a (fewer than 250 days)'),
  ]);
  return `<section><h2>Has the VaR been right? (backtest)</h2><p class="lede">Each day's holdings P&amp;L (the previous value times the day's return from holdings, so deposits and withdrawals are no loss) against the 1-day 99% VaR predicted the day before. Over 250 days about 2.5 exceptions are expected. Kupiec's test: a p-value below 0.05 rejects the exception rate; Christoffersen's: below 0.05, the exceptions come in clusters. Zone (Basel Committee 1996): green 0-4, yellow 5-9, red 10 or more exceptions in 250 days. A zone is evidence, not a verdict: a model can pass by luck.</p>${drawn}${
    rows.length === 0
      ? ''
      : table(['method', 'tested days', 'exceptions (250 days)', 'Kupiec LR', 'Kupiec p', 'Christoffersen p', 'zone'], new Set([1, 2, 3, 4, 5]), rows)
  }</section>`;
}

function stressSection(data: ReportData): string {
  const { stress } = data.losses;
  if (stress.length === 0) return '<section><h2>Stress scenarios</h2><p class="lede">No stress result for this portfolio yet.</p></section>';
  const rows = stress.map((s) => [
    cell(s.scenario_id),
    cell(s.kind),
    cell(s.range_from === null ? '-' : `${s.range_from} to ${s.range_to}`),
    cell(formatMoney(s.pnl_base), true),
    cell(formatPercent(s.pnl_pct), true),
    cell(formatPercent(s.coverage, 1), true),
    cell(s.missing.length === 0 ? '-' : s.missing.join(', ')),
  ]);
  return `<section><h2>Stress scenarios</h2><p class="lede">What one move would do to the holdings of ${escapeHtml(stress[0].date)}, in ${escapeHtml(
    data.baseCurrency,
  )} and as a share of value: configured ranges of stored history (each security's compounded return over the range), hypothetical shocks, and the worst 1-, 5- and 20-day windows of the portfolio's own history. Holdings without data over a range are named and left out, never counted as unchanged; a range not all in stored history has no figure. A stress result is not a probability, and the worst past window is no bound on the next one.</p>${table(
    ['scenario', 'kind', 'range', `P&L (${data.baseCurrency})`, 'P&L % of value', 'coverage', 'without data'],
    new Set([3, 4, 5]),
    rows,
  )}</section>`;
}
