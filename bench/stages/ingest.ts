import { mkdtempSync, rmSync } from 'node:fs';
import path from 'node:path';
import { DuckDBInstance } from '@duckdb/node-api';
import type { Logger } from 'pino';
import { ingestFile } from '../../src/ingest/ingestFile.ts';
import { sqlString } from '../../src/storage/database.ts';
import { openWorkspace } from '../../src/storage/workspace.ts';
import { figure, type Figure } from '../figures.ts';
import type { GeneratedScenario } from '../generate.ts';
import { median, timed } from '../measure.ts';
import { createBenchWorkspace, dropIntoInbox, type BenchWorkspace } from '../workspace.ts';

export interface IngestMeasurement {
  figures: Figure[];
  /** The last run's workspace, history ingested, for the backfill to run on. */
  workspace: BenchWorkspace;
}

/**
 * Each run: DuckDB's plain `read_csv` of every history file into a table of a fresh
 * database file (the floor: parse and store, no checks), then the real `ingestFile`
 * of the same files into a fresh workspace. Both write to disk in the same folder.
 */
export async function measureIngest(scenario: GeneratedScenario, root: string, log: Logger): Promise<IngestMeasurement> {
  const totalRows = scenario.history.reduce((n, f) => n + f.rows, 0);
  const ingestSeconds: number[] = [];
  const plainSeconds: number[] = [];
  const perKind: Record<string, number[]> = {};
  let workspace: BenchWorkspace | null = null;
  for (let run = 0; run < scenario.size.runs; run++) {
    plainSeconds.push(await plainReadCsvSeconds(scenario, root));
    workspace?.remove();
    workspace = createBenchWorkspace(root, 'ingest', scenario.size);
    const seconds = await ingestHistory(scenario, workspace, log);
    for (const [kind, s] of Object.entries(seconds)) (perKind[kind] ??= []).push(s);
    ingestSeconds.push(Object.values(seconds).reduce((a, b) => a + b, 0));
  }
  const ratios = ingestSeconds.map((s, i) => s / plainSeconds[i]);
  const details: Figure['details'] = { rows: totalRows, plain_read_csv_seconds: median(plainSeconds) };
  for (const [kind, seconds] of Object.entries(perKind)) details[`${kind}_seconds`] = median(seconds);
  const size = scenario.size.name;
  return {
    workspace: workspace!,
    figures: [
      figure(
        'ingest_rows_per_second',
        size,
        ingestSeconds.map((s) => totalRows / s),
        { note: `${totalRows.toLocaleString('en-US')} rows in ${scenario.history.length} files`, details },
      ),
      figure('ingest_vs_read_csv', size, ratios, {
        details: { ingest_seconds: median(ingestSeconds), plain_read_csv_seconds: median(plainSeconds) },
      }),
    ],
  };
}

/** Ingests the history files through the real `ingestFile`, in order; seconds per file kind. */
export async function ingestHistory(scenario: GeneratedScenario, ws: BenchWorkspace, log: Logger): Promise<Record<string, number>> {
  const db = await openWorkspace(ws.config, log);
  const seconds: Record<string, number> = {};
  try {
    for (const file of scenario.history) {
      const target = dropIntoInbox(file.path, ws.config.inbox);
      const { value: outcome, seconds: s } = await timed(() => ingestFile(db, ws.config, log, target));
      if (outcome.status !== 'ingested') {
        throw new Error(`${outcome.name} was ${outcome.status}: ${outcome.rejection?.message ?? 'no reason given'}`);
      }
      if (outcome.rows !== file.rows) throw new Error(`${outcome.name}: ingestFile counted ${outcome.rows} rows, the file has ${file.rows}`);
      seconds[file.kind] = (seconds[file.kind] ?? 0) + s;
    }
  } finally {
    db.close();
  }
  return seconds;
}

async function plainReadCsvSeconds(scenario: GeneratedScenario, root: string): Promise<number> {
  const dir = mkdtempSync(path.join(root, 'plain-'));
  const instance = await DuckDBInstance.create(path.join(dir, 'plain.duckdb'));
  const conn = await instance.connect();
  try {
    let total = 0;
    for (const [i, file] of scenario.history.entries()) {
      const { seconds } = await timed(() => conn.run(`create table t${i} as select * from read_csv(${sqlString(file.path)})`));
      total += seconds;
    }
    return total;
  } finally {
    conn.closeSync();
    instance.closeSync();
    rmSync(dir, { recursive: true, force: true });
  }
}
