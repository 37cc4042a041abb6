import { contributionsSection, correlationSection, realizedSection, volatilitySection } from './chartSections.ts';
import { benchmarkSection, exposureSection } from './exposureSections.ts';
import { escapeHtml } from './format.ts';
import { lossSection } from './lossSections.ts';
import type { ReportData } from './reportData.ts';
import { STYLESHEET } from './style.ts';
import { volChangeSection } from './volChangeSection.ts';
import { breachTable, cautionsSection, currencyTable, keyFigures, latestTable, provenanceFooter, qualitySection } from './tableSections.ts';

/**
 * The whole report as one HTML page: inline CSS and SVG, no script and no external
 * asset, so it opens offline, attaches to an email and prints as it shows.
 */
export function renderReport(data: ReportData, generatedAt: Date): string {
  const title = `Risk report: ${data.portfolioId}, ${data.asOf}`;
  return `<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>${escapeHtml(title)}</title>
<style>${STYLESHEET}</style>
</head>
<body>
<main>
<header class="masthead">
<p class="eyebrow">riskfold portfolio risk report</p>
<h1>${escapeHtml(data.portfolioId)}</h1>
<p class="subtitle">As of ${escapeHtml(data.asOf)} · base currency ${escapeHtml(data.baseCurrency)} · windows ${data.windows.join(', ')} trading days</p>
</header>
${keyFigures(data)}
${volatilitySection(data)}
${volChangeSection(data)}
${realizedSection(data)}
${currencyTable(data)}
${contributionsSection(data)}
${correlationSection(data)}
${exposureSection(data)}
${benchmarkSection(data)}
${lossSection(data)}
${breachTable(data)}
${latestTable(data)}
${qualitySection(data)}
${cautionsSection()}
${provenanceFooter(data, generatedAt)}
</main>
</body>
</html>
`;
}
