import { CAUTIONS } from './cautions.ts';
import { escapeHtml, formatMoney, formatNumber, formatPercent, formatLimitFigure } from './format.ts';
import { estimateLabel, seriesLabel } from '../labels.ts';
import { seriesOf } from '../limits/breachStore.ts';
import { levelReachedOn } from '../limits/episodes.ts';
import type { Breach, ReportData } from './reportData.ts';

const cell = (text: string, num = false) => `<td${num ? ' class="num"' : ''}>${escapeHtml(text)}</td>`;
const head = (labels: string[], numeric: ReadonlySet<number> = new Set()) =>
  `<thead><tr>${labels.map((l, i) => `<th${numeric.has(i) ? ' class="num"' : ''}>${escapeHtml(l)}</th>`).join('')}</tr></thead>`;

/** The open episode of the portfolio's main volatility limit, if any (it sets the status chip). */
export function openEpisode(data: ReportData): Breach | undefined {
  return data.breaches.find(
    (b) => b.closed_on === null && !b.retracted && b.metric === 'vol_ex_ante' && b.estimator === 'sample' && b.window_days === data.focusWindow,
  );
}

/** "in breach since 2026-08-21 (warning from 2026-07-13)": dated as `status` and the alerts date it. */
function episodeChipText(episode: Breach): string {
  const since = levelReachedOn(episode.level, episode.opened_on, episode.escalated_on);
  if (episode.level === 'warning') return `warning since ${since}`;
  // an episode that opened below the limit was a warning first: say since when
  return since === episode.opened_on ? `in breach since ${since}` : `in breach since ${since} (warning from ${episode.opened_on})`;
}

export function keyFigures(data: ReportData): string {
  const focus = data.latest.find((r) => r.estimator === 'sample' && r.window_days === data.focusWindow);
  const limit = data.limits.find((l) => l.metric === 'vol_ex_ante' && l.window === data.focusWindow && l.estimator === 'sample');
  const episode = openEpisode(data);
  const chip = episode ? `<span class="chip chip-${episode.level}">${escapeHtml(episodeChipText(episode))}</span>` : '<span class="chip chip-ok">within limit</span>';
  const figure = (label: string, value: string, note = '') =>
    `<div class="figure"><div class="label">${escapeHtml(label)}</div><div class="value">${value}</div><div class="note">${note}</div></div>`;
  return `<div class="figures">${[
    figure(`Value (${data.baseCurrency})`, escapeHtml(formatMoney(focus?.portfolio_value)), escapeHtml(`as of ${data.asOf}`)),
    figure(
      `${data.focusWindow}-day volatility`,
      escapeHtml(formatPercent(focus?.vol_ex_ante)),
      `${limit ? escapeHtml(`limit ${formatPercent(limit.limit, 1)}`) : 'no limit set'} ${chip}`,
    ),
    figure(
      `VaR 99%, 1 day (${data.baseCurrency})`,
      escapeHtml(formatMoney(focus?.var_99_1d)),
      escapeHtml(`ES 97.5%: ${formatMoney(focus?.es_975_1d)}; normal, ${data.focusWindow}-day window, sample covariance`),
    ),
    figure('Diversification ratio', escapeHtml(formatNumber(focus?.diversification_ratio)), escapeHtml(`coverage ${formatPercent(focus?.coverage, 1)}`)),
  ].join('')}</div>`;
}

export function latestTable(data: ReportData): string {
  const rows = data.latest.map((r) =>
    [
      cell(estimateLabel(r.estimator, r.window_days)),
      cell(formatPercent(r.vol_ex_ante), true),
      cell(formatPercent(r.vol_realized), true),
      cell(formatPercent(r.ann_return), true),
      cell(formatMoney(r.var_99_1d), true),
      cell(formatMoney(r.es_975_1d), true),
      cell(formatMoney(r.var_99_10d), true),
      cell(formatPercent(r.coverage, 1), true),
      cell(r.status),
    ].join(''),
  );
  return `<section><h2>Figures on ${escapeHtml(data.asOf)} by window</h2><p class="lede">Volatility and return annualized; VaR and expected shortfall in ${escapeHtml(data.baseCurrency)}, normal model.</p><table>${head(
    ['window', 'ex-ante vol', 'realized vol', 'ann. return', 'VaR 99% 1d', 'ES 97.5% 1d', 'VaR 99% 10d', 'coverage', 'status'],
    new Set([1, 2, 3, 4, 5, 6, 7]),
  )}<tbody>${rows.map((r) => `<tr>${r}</tr>`).join('')}</tbody></table></section>`;
}

export function currencyTable(data: ReportData): string {
  const rows = data.currency.map((c) =>
    [
      cell(`${c.window}-day`),
      cell(formatPercent(c.full), true),
      cell(formatPercent(c.withoutFx), true),
      cell(formatPercent(c.full === null || c.withoutFx === null ? null : c.full - c.withoutFx), true),
      cell(formatPercent(c.coverage, 1), true),
    ].join(''),
  );
  return `<section><h2>How much of the volatility is currency</h2><p class="lede">Ex-ante volatility of the weights on ${escapeHtml(data.asOf)} from each window's covariance of ${escapeHtml(
    data.baseCurrency,
  )} returns, and the same with every exchange-rate move set to zero (local-currency returns; cash in another currency then does not move). The difference is what currency adds (it can be negative when currencies offset the markets). Holdings without a full window are left out of both.</p><table>${head(
    ['window', `volatility in ${data.baseCurrency}`, 'without fx moves', 'from currency', 'coverage'],
    new Set([1, 2, 3, 4]),
  )}<tbody>${rows.map((r) => `<tr>${r}</tr>`).join('')}</tbody></table></section>`;
}

export function breachTable(data: ReportData): string {
  if (data.breaches.length === 0) {
    return '<section><h2>Limit episodes</h2><p class="lede">No limit episode has been recorded for this portfolio.</p></section>';
  }
  const rows = data.breaches.map((b) =>
    [
      cell(seriesLabel(seriesOf(b))),
      cell(b.level),
      cell(b.opened_on),
      cell(b.escalated_on ?? '-'),
      cell(b.retracted ? 'retracted' : (b.closed_on ?? 'open')),
      cell(`${formatLimitFigure(b.metric, b.peak_value)} on ${b.peak_on}`, true),
      cell(formatLimitFigure(b.metric, b.limit_value, 1), true),
    ].join(''),
  );
  return `<section><h2>Limit episodes</h2><p class="lede">An episode opens at the warning level (or the limit), escalates once the limit is reached, and closes on the first day below the clear level. A correction that undoes an episode leaves it here, marked retracted.</p><table>${head(
    ['metric', 'level', 'opened', 'escalated', 'closed', 'peak', 'limit'],
    new Set([5, 6]),
  )}<tbody>${rows.map((r) => `<tr>${r}</tr>`).join('')}</tbody></table></section>`;
}

export function qualitySection(data: ReportData): string {
  const { quality } = data;
  if (quality.length === 0) {
    return '<section><h2>Data quality</h2><p class="lede">No data problem is flagged for this portfolio.</p></section>';
  }
  const rows = quality.map((q) =>
    [cell(q.problem), cell(q.security_id ?? '(portfolio)'), cell(String(q.n), true), cell(q.first_date), cell(q.last_date), cell(q.latest_reason)].join(''),
  );
  return `<section><h2>Data quality</h2><p class="lede">Problems flagged in the data behind this portfolio's figures (view check_data_quality), one row per problem and security, latest first.</p><table>${head(
    ['problem', 'security', 'dates', 'first', 'last', 'latest reason'],
    new Set([2]),
  )}<tbody>${rows.map((r) => `<tr>${r}</tr>`).join('')}</tbody></table></section>`;
}

export function cautionsSection(): string {
  return `<section class="cautions"><h2>Cautions</h2><ul>${CAUTIONS.map((c) => `<li>${escapeHtml(c)}</li>`).join('')}</ul></section>`;
}

export function provenanceFooter(data: ReportData, generatedAt: Date): string {
  const p = data.provenance;
  const item = (label: string, value: string) => `<dt>${escapeHtml(label)}</dt><dd>${escapeHtml(value)}</dd>`;
  return `<footer><dl>${[
    item('as of', data.asOf),
    item('risk run', p.runId === null ? 'n/a' : `${p.runId} (${p.trigger ?? 'unknown trigger'}, finished ${p.runFinishedAt ?? 'n/a'})`),
    item('config sha-256', p.configHash),
    item('database', p.database),
    item('generated', generatedAt.toISOString()),
  ].join('')}</dl></footer>`;
}
