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
// column names keep their underscores (they are the names `status` and SQL use) and may break after them
const table = (labels: string[], numeric: ReadonlySet<number>, rows: string[]) =>
  `<div class="wide"><table class="firm"><thead><tr>${labels
    .map((l, i) => `<th${numeric.has(i) ? ' class="num"' : ''}>${escapeHtml(l).replaceAll('_', '_<wbr>')}</th>`)
    .join('')}</tr></thead><tbody>${rows.map((r) => `<tr>${r}</tr>`).join('')}</tbody></table></div>`;

/** The status table, column for column (names as `riskfold status` prints them), each portfolio a link. */
function limitsSection(data: FirmData, link: Link): string {
  const { columns, rows, units = [] } = data.status;
  const numeric = new Set(units.flatMap((u, i) => (u ? [i] : [])));
  const body = rows.map((row) =>
    row
      .map((v, i) => {
        if (i === 0) return cell(link(String(v)));
        if (units[i] === 'percent') return cell(escapeHtml(formatPercent(v as number | null)), true);
        if (units[i] === 'amount') return cell(escapeHtml(formatMoney(v as number | null)), true);
        return cell(escapeHtml(v === null || v === undefined ? '-' : String(v)));
      })
      .join(''),
  );
  const lede =
    rows.length === 0
      ? 'No portfolio has risk figures yet.'
      : 'Each portfolio on its latest valuation date: every figure a limit watches, the limit, the headroom left (limit minus figure) and the state of its episode since the date shown; then coverage and status. "not watched": no limit applies to that portfolio.';
  return `<section><h2>Portfolios against their limits</h2><p class="lede">${escapeHtml(lede)}</p>${rows.length ? table(columns, numeric, body) : ''}</section>`;
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
  );
  return `<section><h2>Open limit episodes</h2><p class="lede">${escapeHtml(
    'Episodes not yet closed, breaches first: opened at the warning level (or the limit), escalated once the limit was reached; an episode closes on the first day below its clear level.',
  )}</p>${table(['portfolio', 'metric', 'level', 'opened', 'escalated', 'peak', 'limit'], new Set([5, 6]), rows)}</section>`;
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
  );
  return `<section><h2>Data problems</h2><p class="lede">${escapeHtml(
    "What check_data_quality flags on each portfolio's latest valuation date, by kind: how many rows, the first securities concerned and one reason.",
  )}</p>${table(['portfolio', 'date', 'problem', 'rows', 'securities', 'reason'], new Set([3]), rows)}</section>`;
}
