import { existsSync, mkdirSync, mkdtempSync, readdirSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import type { Logger } from 'pino';
import { deliveriesSettled } from '../alerts/deliverAlerts.ts';
import { loadConfig, type Config } from '../config/load.ts';
import { RiskfoldError } from '../errors.ts';
import { runBatch } from '../batch/runBatch.ts';
import { defaultReportName, reportHtml } from '../report/writeReport.ts';
import { openWorkspace } from '../storage/workspace.ts';
import { demoConfig } from './demoConfig.ts';
import { deliveriesOf, type Delivery } from './deliveries.ts';
import { buildScenario, DEFAULT_SEED } from './scenario.ts';
import { readDemoSummary, type DemoSummary } from './summary.ts';

export interface DemoOptions {
  /** Folder to build the scenario in: must be new or empty. Default: a fresh folder under the OS temp folder. */
  dir?: string;
  seed?: number;
  /** Called after each delivery is processed (the CLI prints progress). */
  onDelivery?: (delivery: Delivery, index: number, total: number) => void;
  now?: Date;
}

export interface DemoResult {
  dir: string;
  config: Config;
  summary: DemoSummary;
  /** The report of the account that breached its limit (the first account if none did). */
  reportFile: string;
  deliveries: number;
  seconds: number;
}

function prepareFolder(dir: string | undefined): string {
  if (dir === undefined) return mkdtempSync(path.join(tmpdir(), 'riskfold-demo-'));
  const resolved = path.resolve(dir);
  if (existsSync(resolved) && readdirSync(resolved).length > 0) {
    throw new RiskfoldError('usage', `${resolved} is not empty: the demo builds its scenario in a new or empty folder`);
  }
  mkdirSync(resolved, { recursive: true });
  return resolved;
}

/**
 * Builds the invented scenario in a folder and runs the whole pipeline on it, one
 * delivery at a time as the worker would (runBatch per delivery: ingest each file,
 * one recompute, limit check, alert delivery, read copy), then writes the report of the
 * account that breached and returns the summary read back from the database.
 */
export async function runDemo(log: Logger, options: DemoOptions = {}): Promise<DemoResult> {
  const started = Date.now();
  const dir = prepareFolder(options.dir);
  const configPath = path.join(dir, 'pipeline.config.json');
  writeFileSync(configPath, `${JSON.stringify(demoConfig(), null, 2)}\n`);
  const config = loadConfig(configPath);
  const deliveries = deliveriesOf(buildScenario(options.seed ?? DEFAULT_SEED));

  const db = await openWorkspace(config, log);
  try {
    for (const [i, delivery] of deliveries.entries()) {
      const files = delivery.files.map((f) => {
        const file = path.join(config.inbox, f.name);
        writeFileSync(file, f.text);
        return file;
      });
      const batch = await runBatch(db, config, log, files);
      if (batch.runError !== null) throw new Error(`demo: the recompute after ${delivery.label} failed: ${batch.runError}`);
      options.onDelivery?.(delivery, i, deliveries.length);
    }
    await deliveriesSettled(db);
    const summary = await readDemoSummary(db, config);
    const reported = summary.accounts.find((a) => a.episodes.some((e) => e.level === 'breach')) ?? summary.accounts[0];
    const { html, asOf } = await reportHtml(db, config, reported.portfolioId, options.now ?? new Date());
    const reportFile = path.join(dir, defaultReportName(reported.portfolioId, asOf));
    writeFileSync(reportFile, html);
    return { dir, config, summary, reportFile, deliveries: deliveries.length, seconds: (Date.now() - started) / 1000 };
  } finally {
    db.close();
  }
}
