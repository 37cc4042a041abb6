import { writeFileSync } from 'node:fs';
import path from 'node:path';
import type { Config } from '../config/load.ts';
import type { Database } from '../storage/database.ts';
import { openForReading, type ReadHandle } from '../storage/workspace.ts';
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
