import { existsSync, readdirSync, utimesSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { expect } from 'vitest';
import { ingestFile } from '../../src/ingest/ingestFile.ts';
import { memoryLogger } from '../../src/log/logger.ts';
import { openDatabase } from '../../src/storage/database.ts';
import { openWorkspace } from '../../src/storage/workspace.ts';
import { startCli } from '../cli/cliProcess.ts';
import { pricesCsv } from '../helpers/files.ts';
import type { WorkerDir } from '../helpers/workspace.ts';

/** The deliveries of one kill scenario, in the order they land. */
export type Delivery = 'duplicate' | 'bad' | 'good';

const FILES: Record<Delivery, { name: string; text: string }> = {
  // the same bytes as the file loaded before the scenario, under another name
  duplicate: { name: 'prices_again.csv', text: pricesCsv(30, 2, '2020-01-01') },
  bad: { name: 'prices_bad.csv', text: 'date,security_id,price\n2020-03-02,EQ-NORDWIND,-1\n' },
  good: { name: 'prices_good.csv', text: pricesCsv(10, 2, '2020-03-01') },
};

/** Loads the original of the duplicate, in this process, before any worker runs. */
export async function preload(wd: WorkerDir): Promise<void> {
  const { log } = memoryLogger();
  const db = await openWorkspace(wd.config, log);
  try {
    const file = path.join(wd.config.inbox, 'prices_first.csv');
    writeFileSync(file, FILES.duplicate.text);
    expect((await ingestFile(db, wd.config, log, file)).status).toBe('ingested');
  } finally {
    db.close();
  }
}

/** Drops the deliveries with increasing mtimes, so the catch-up takes them in this order. */
export function deliver(wd: WorkerDir, order: Delivery[]): void {
  const t0 = Date.now() / 1000 - 100;
  order.forEach((d, i) => {
    const file = path.join(wd.config.inbox, FILES[d].name);
    writeFileSync(file, FILES[d].text);
    const t = new Date((t0 + i) * 1000);
    utimesSync(file, t, t);
  });
}

/** Runs `riskfold watch` with RISKFOLD_FAULT=step and waits until that step killed it. */
export async function killedWorkerAt(wd: WorkerDir, step: string): Promise<void> {
  const worker = startCli(['watch', '--config', wd.configPath], { RISKFOLD_FAULT: step });
  const exit = await worker.exited;
  expect(exit.signal, `the worker was to be killed at ${step}`).toBe('SIGKILL');
}

/** The restart: `riskfold ingest`, the same batch as the worker's catch-up, to completion. */
export async function restart(wd: WorkerDir): Promise<void> {
  const run = startCli(['ingest', '--config', wd.configPath]);
  const exit = await run.exited;
  expect(exit.code, JSON.stringify(run.logLines().slice(-3))).toBe(0);
}

function filesUnder(dir: string): string[] {
  if (!existsSync(dir)) return [];
  return readdirSync(dir, { recursive: true, withFileTypes: true })
    .filter((d) => d.isFile())
    .map((d) => path.join(d.parentPath, d.name))
    .sort();
}

/**
 * What must hold after any kill and a restart: each delivery has exactly one ledger row
 * with the outcome it would have had without the kill; every file in archive/ and
 * quarantine/ is a ledger row's file (no second copies, no file without a row), each
 * rejected one has its reason file; the inbox is empty; no rows were loaded twice; no
 * temporary read copy is left.
 */
export async function expectLedgerWhole(wd: WorkerDir, order: Delivery[]): Promise<void> {
  const db = await openDatabase(wd.config.database, { readOnly: true });
  try {
    const ledger = await db.all<{ name: string; status: string; archived_path: string }>('select name, status, archived_path from ingested_files order by file_id');
    const expected = [{ name: 'prices_first.csv', status: 'ingested' }, ...order.map((d) => ({ name: FILES[d].name, status: d === 'good' ? 'ingested' : d === 'duplicate' ? 'duplicate' : 'rejected' }))];
    expect(ledger.map(({ name, status }) => ({ name, status })).sort((a, b) => a.name.localeCompare(b.name))).toEqual(
      expected.sort((a, b) => a.name.localeCompare(b.name)),
    );
    const kept = ledger.filter((r) => r.status !== 'rejected').map((r) => r.archived_path).sort();
    const rejected = ledger.filter((r) => r.status === 'rejected').map((r) => r.archived_path);
    expect(filesUnder(wd.config.archive)).toEqual(kept);
    expect(filesUnder(wd.config.quarantine)).toEqual(rejected.flatMap((p) => [p, `${p}.reason.txt`]).sort());
    expect(readdirSync(wd.config.inbox)).toEqual([]);
    const [{ n }] = await db.all<{ n: number }>('select count(*)::integer as n from prices');
    expect(n).toBe(60 + (order.includes('good') ? 20 : 0));
  } finally {
    db.close();
  }
  expect(readdirSync(path.dirname(wd.config.readCopy)).filter((f) => f.includes('.tmp-'))).toEqual([]);
}
