import { writeFileSync } from 'node:fs';
import path from 'node:path';
import type { Config } from '../config/load.ts';
import type { Database } from '../storage/database.ts';
import { openForReading, type ReadHandle } from '../storage/workspace.ts';
import { RiskfoldError } from '../errors.ts';
import { loadFirmData } from './firmData.ts';
import { renderFirmPage } from './firmPage.ts';
import { renderReport } from './renderReport.ts';
import { loadReportData } from './reportData.ts';

export interface WrittenReport {
  file: string;
  asOf: string;
  /** Where the figures were read: the database itself, or the worker's published read copy. */
  source: ReadHandle['source'];
}

/** Renders the report from an already opened database (the demo's own workspace). */
export async function reportHtml(db: Database, config: Config, portfolioId: string, generatedAt: Date): Promise<{ html: string; asOf: string }> {
  const data = await loadReportData(db, config, portfolioId, db.path);
  return { html: renderReport(data, generatedAt), asOf: data.asOf };
}

/** report-<portfolio>-<as of>.html, with characters unsafe in file names replaced. */
export function defaultReportName(portfolioId: string, asOf: string): string {
  return `report-${portfolioId.replace(/[^A-Za-z0-9._-]/g, '_')}-${asOf}.html`;
}

/**
 * Writes the report of one portfolio. Reads through openForReading, so it works while
 * the worker holds the database (it then reads the latest published copy).
 */
export async function writeReport(
  config: Config,
  options: { portfolio: string; out?: string; now?: Date; cwd?: string },
): Promise<WrittenReport> {
  const handle = await openForReading(config);
  try {
    const { html, asOf } = await reportHtml(handle.db, config, options.portfolio, options.now ?? new Date());
    const file = path.resolve(options.cwd ?? process.cwd(), options.out ?? defaultReportName(options.portfolio, asOf));
    writeFileSync(file, html);
    return { file, asOf, source: handle.source };
  } finally {
    handle.db.close();
  }
}

export interface WrittenFirmReport extends WrittenReport {
  /** Each portfolio's own page, written beside the overview (none for a portfolio without figures). */
  pages: { portfolio: string; file: string }[];
}

/** report-all-<as of>.html */
export function defaultFirmReportName(asOf: string | null): string {
  return `report-all-${asOf ?? 'no-figures'}.html`;
}

/**
 * Writes the firm-wide page and, in the same folder, every portfolio's own page, which
 * the overview links to by file name (so the folder can be moved or mailed as a whole).
 */
export async function writeFirmReport(config: Config, options: { out?: string; now?: Date; cwd?: string } = {}): Promise<WrittenFirmReport> {
  const handle = await openForReading(config);
  try {
    const now = options.now ?? new Date();
    const data = await loadFirmData(handle.db, config, handle.db.path);
    const file = path.resolve(options.cwd ?? process.cwd(), options.out ?? defaultFirmReportName(data.asOf));
    const pages: WrittenFirmReport['pages'] = [];
    for (const portfolio of data.portfolios) {
      try {
        const { html, asOf } = await reportHtml(handle.db, config, portfolio, now);
        const page = path.join(path.dirname(file), defaultReportName(portfolio, asOf));
        writeFileSync(page, html);
        pages.push({ portfolio, file: page });
      } catch (err) {
        // a portfolio without figures yet is listed on the overview, without a page
        if (!(err instanceof RiskfoldError && err.kind === 'not_found')) throw err;
      }
    }
    const links = new Map(pages.map((p) => [p.portfolio, path.basename(p.file)]));
    writeFileSync(file, renderFirmPage(data, links, now));
    return { file, asOf: data.asOf ?? 'no figures yet', source: handle.source, pages };
  } finally {
    handle.db.close();
  }
}
