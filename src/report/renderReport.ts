import { contributionsSection, correlationSection, realizedSection, volatilitySection } from './chartSections.ts';
import { benchmarkSection, exposureSection } from './exposureSections.ts';
import { escapeHtml } from './format.ts';
import { holdingsSection } from './holdingsSection.ts';
import { htmlPage } from './htmlPage.ts';
import { lossSection } from './lossSections.ts';
import type { ReportData } from './reportData.ts';
import { volChangeSection } from './volChangeSection.ts';
import { breachTable, cautionsSection, currencyTable, keyFigures, latestTable, provenanceFooter, qualitySection } from './tableSections.ts';

/** The whole report as one self-contained HTML page (see htmlPage). */
export function renderReport(data: ReportData, generatedAt: Date): string {
  const head = {
    title: `Risk report: ${data.portfolioId}, ${data.asOf}`,
    eyebrow: 'riskfold portfolio risk report',
    heading: data.portfolioId,
    subtitleHtml: `As of ${escapeHtml(data.asOf)} · base currency ${escapeHtml(data.baseCurrency)} · windows ${data.windows.join(', ')} trading days`,
  };
  return htmlPage(
    head,
    `${keyFigures(data)}
${volatilitySection(data)}
${volChangeSection(data)}
${realizedSection(data)}
${currencyTable(data)}
${contributionsSection(data)}
${correlationSection(data)}
${holdingsSection(data)}
${exposureSection(data)}
${benchmarkSection(data)}
${lossSection(data)}
${breachTable(data)}
${latestTable(data)}
${qualitySection(data)}
${cautionsSection()}
${provenanceFooter(data, generatedAt)}`,
  );
}
