import { escapeHtml, formatMoney, formatPercent, formatLimitFigure } from './format.ts';
import type { FirmData } from './firmData.ts';
import { seriesLabel } from '../labels.ts';
import { seriesOf } from '../limits/breachStore.ts';
import { htmlPage } from './htmlPage.ts';
import { cautionsSection } from './tableSections.ts';

/**
 * The firm-wide page: every portfolio against its limits, the open episodes and the
 * data problems of each portfolio's latest date, each portfolio linking to its own
 * page. One HTML file, inline CSS, no script, like the portfolio report.
 */
export function renderFirmPage(data: FirmData, pages: ReadonlyMap<string, string>, generatedAt: Date): string {
  const link = (id: string) => {
    const href = pages.get(id);
    return href ? `<a href="${escapeHtml(encodeURI(href))}">${escapeHtml(id)}</a>` : escapeHtml(id);
  };
  const asOf = data.asOf ?? 'no figures yet';
  const head = {
    title: `Risk overview: all portfolios, ${asOf}`,
    eyebrow: 'riskfold firm-wide risk overview',
    heading: 'All portfolios',
    subtitleHtml: `As of ${escapeHtml(asOf)} · portfolios: ${data.portfolios.length} · open limit episodes: ${data.openEpisodes.length}`,
  };
  return htmlPage(
    head,
    `${limitsSection(data, link)}
${episodesSection(data, link)}
${problemsSection(data, link)}
${cautionsSection()}
<footer><dl><dt>database</dt><dd>${escapeHtml(data.database)}</dd><dt>generated</dt><dd>${escapeHtml(generatedAt.toISOString())}</dd></dl></footer>`,
  );
}

type Link = (portfolioId: string) => string;

const cell = (html: string, num = false) => `<td${num ? ' class="num"' : ''}>${html}</td>`;
/** `rows`: whole `<tr>` elements. */
const table = (labels: string[], numeric: ReadonlySet<number>, rows: string[], id?: string) =>
  `<div class="wide"${id ? ` id="${id}"` : ''}><table class="firm"><thead><tr>${labels
    .map((l, i) => `<th${numeric.has(i) ? ' class="num"' : ''}>${escapeHtml(l)}</th>`)
    .join('')}</tr></thead><tbody>${rows.join('')}</tbody></table></div>`;

/**
 * Every portfolio against its limits, one row per portfolio and watched figure (so the
 * table stays as wide as one figure however many are watched); the portfolio's own
 * cells (as of, value, coverage, status) span its rows.
 */
function limitsSection(data: FirmData, link: Link): string {
  const { standings } = data;
  const body = standings.flatMap((p) => {
    const figures = p.figures.filter((f) => f !== null);
    const span = Math.max(1, figures.length);
    const spanned = (html: string, cls = '') => `<td${cls ? ` class="${cls}"` : ''}${span > 1 ? ` rowspan="${span}"` : ''}>${html}</td>`;
    const own = [spanned(link(p.portfolioId)), spanned(escapeHtml(p.asOf), 'date'), spanned(escapeHtml(formatMoney(p.value)), 'num')];
    const tail = [spanned(escapeHtml(formatPercent(p.coverage)), 'num'), spanned(breakable(p.status))];
    if (figures.length === 0) return [`<tr data-portfolio="${escapeHtml(p.portfolioId)}">${own.join('')}<td colspan="6">no limit applies</td>${tail.join('')}</tr>`];
    return figures.map((f, i) => {
      const metric = f.series.metric;
      const cells = [
        cell(escapeHtml(seriesLabel(f.series))),
        cell(escapeHtml(formatLimitFigure(metric, f.value)), true),
        cell(escapeHtml(formatLimitFigure(metric, f.limit)), true),
        cell(escapeHtml(formatLimitFigure(metric, f.headroom)), true),
        cell(f.episode === 'clear' ? 'clear' : `<span class="chip chip-${escapeHtml(f.episode)}">${escapeHtml(f.episode)}</span>`),
        `<td class="date">${escapeHtml(f.since ?? '-')}</td>`,
      ];
      const row = i === 0 ? [...own.slice(0, 3), ...cells, ...tail] : cells;
      return `<tr data-portfolio="${escapeHtml(p.portfolioId)}">${row.join('')}</tr>`;
    });
  });
  const lede =
    standings.length === 0
      ? 'No portfolio has risk figures yet.'
      : 'Each portfolio on its latest valuation date, one row per figure a limit watches: the figure, its limit, the headroom left (limit minus figure) and the state of its episode since the date shown; a backtest zone counts exceptions in 250 days. Coverage and status are the portfolio\'s.';
  const labels = ['portfolio', 'as of', 'value', 'figure', 'now', 'limit', 'headroom', 'episode', 'since', 'coverage', 'status'];
  return `<section><h2>Portfolios against their limits</h2><p class="lede">${escapeHtml(lede)}</p>${
    standings.length ? table(labels, new Set([2, 4, 5, 6, 9]), body, 'standings') : ''
  }</section>`;
}

/** A status such as "partial_history,suspect_price" may break after its commas and underscores. */
function breakable(text: string): string {
  return escapeHtml(text).replace(/([,_])/g, '$1<wbr>');
}

function episodesSection(data: FirmData, link: Link): string {
  if (data.openEpisodes.length === 0) {
    return '<section><h2>Open limit episodes</h2><p class="lede">No limit episode is open.</p></section>';
  }
  const rows = data.openEpisodes.map((e) =>
    [
      cell(link(e.portfolio_id)),
      cell(escapeHtml(seriesLabel(seriesOf(e)))),
      cell(`<span class="chip chip-${escapeHtml(e.level)}">${escapeHtml(e.level)}</span>`),
      cell(escapeHtml(e.opened_on)),
      cell(escapeHtml(e.escalated_on ?? '-')),
      cell(escapeHtml(`${formatLimitFigure(e.metric, e.peak_value)} on ${e.peak_on}`), true),
      cell(escapeHtml(formatLimitFigure(e.metric, e.limit_value, 1)), true),
    ].join(''),
  ).map((r) => `<tr>${r}</tr>`);
  return `<section><h2>Open limit episodes</h2><p class="lede">${escapeHtml(
    'Episodes not yet closed, breaches first: opened at the warning level (or the limit), escalated once the limit was reached; an episode closes on the first day below its clear level.',
  )}</p>${table(['portfolio', 'figure', 'level', 'opened', 'escalated', 'peak', 'limit'], new Set([5, 6]), rows)}</section>`;
}

function problemsSection(data: FirmData, link: Link): string {
  if (data.problems.length === 0) {
    return "<section><h2>Data problems</h2><p class=\"lede\">No data problem is flagged on any portfolio's latest valuation date.</p></section>";
  }
  const rows = data.problems.map((p) =>
    [
      cell(link(p.portfolio_id)),
      cell(escapeHtml(p.date)),
      cell(escapeHtml(p.problem)),
      cell(escapeHtml(String(p.n)), true),
      cell(escapeHtml(p.securities ?? '(portfolio)')),
      cell(escapeHtml(p.example)),
    ].join(''),
  ).map((r) => `<tr>${r}</tr>`);
  return `<section><h2>Data problems</h2><p class="lede">${escapeHtml(
    "What check_data_quality flags on each portfolio's latest valuation date, by kind: how many rows, the first securities concerned and one reason.",
  )}</p>${table(['portfolio', 'date', 'problem', 'rows', 'securities', 'reason'], new Set([3]), rows)}</section>`;
}
