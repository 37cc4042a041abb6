import { cell, escapeHtml, formatMoney, formatNumber, formatPercent, table } from './format.ts';
import type { ReportData } from './reportData.ts';

/** Every position on the report's date, largest weight first; an unvalued one is listed with its reason. */
export function holdingsSection(data: ReportData): string {
  const rows = data.holdings.map((h) => [
    `<td title="${escapeHtml(h.name ?? h.security_id)}">${escapeHtml(h.security_id)}</td>`,
    cell(h.asset_class),
    cell(h.currency),
    cell(formatNumber(h.quantity, 2), true),
    cell(formatNumber(h.price_local, 4), true),
    cell(formatMoney(h.value_base), true),
    cell(formatPercent(h.weight, 2), true),
    cell(h.price_status),
  ]);
  const unvalued = data.holdings.filter((h) => h.value_base === null).length;
  const note = unvalued
    ? ` ${unvalued} holding${unvalued === 1 ? ' has' : 's have'} no value (no price or fx rate): the portfolio's value and every weight are unknown on this date.`
    : '';
  const labels = ['security', 'asset class', 'currency', 'quantity', 'price (local)', `value (${data.baseCurrency})`, 'weight', 'price status'];
  return `<section data-section="holdings"><h2>Holdings on ${escapeHtml(data.asOf)}</h2><p class="lede">Value = quantity × local price × fx rate to ${escapeHtml(
    data.baseCurrency,
  )}; weight = value / portfolio value, cash included.${escapeHtml(note)}</p>${table(labels, new Set([3, 4, 5, 6]), rows)}</section>`;
}
