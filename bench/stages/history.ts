import { statSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import type { Logger } from 'pino';
import { runRecompute } from '../../src/batch/runRecompute.ts';
import { KEPT_TABLES } from '../../src/history/keptTables.ts';
import { ingestFile } from '../../src/ingest/ingestFile.ts';
import type { Database } from '../../src/storage/database.ts';
import { openWorkspace } from '../../src/storage/workspace.ts';
import { figure, type Figure } from '../figures.ts';
import type { SizeName } from '../scenario.ts';
import type { BenchWorkspace } from '../workspace.ts';

const MIB = 1024 * 1024;

/**
 * How the database grows when every superseded result row is kept: `days` corrections in
 * a row (a year of business days at the real sizes), each re-delivering one price of the
 * latest date with a small change, each followed by its run. A run replaces that date's
 * risk rows, the portfolios' latest contributions and the episodes it updates, as a daily
 * correction does in steady state. The figure is the growth of the checkpointed file; the
 * details count the history rows per table. Runs on the backfilled workspace, so the
 * file's starting size is a full history's.
 */
export async function measureHistoryGrowth(ws: BenchWorkspace, size: SizeName, days: number, log: Logger): Promise<Figure> {
  const db = await openWorkspace(ws.config, log);
  try {
    const before = await fileBytes(db, ws);
    const historyBefore = await historyRows(db);
    const [{ date, security_id: security, price }] = await db.all<{ date: string; security_id: string; price: number }>(
      `select date, security_id, price from clean_prices where date = (select max(date) from risk_daily) order by security_id limit 1`,
    );
    const started = performance.now();
    for (let day = 1; day <= days; day++) {
      // a different small change each day (sin of a whole number is never 0 nor repeats):
      // each delivery changes the figures, none is a duplicate, none drifts far
      const corrected = price * (1 + 0.0005 * Math.sin(day));
      const file = path.join(ws.config.inbox, `prices_correction_${String(day).padStart(3, '0')}.csv`);
      writeFileSync(file, `date,security_id,price\n${date},${security},${corrected}\n`);
      const outcome = await ingestFile(db, ws.config, log, file);
      if (outcome.status !== 'ingested') throw new Error(`history growth: ${path.basename(file)} was ${outcome.status}`);
      await runRecompute(db, ws.config, log, { trigger: 'bench:correction', from: date, portfolios: null });
    }
    const seconds = (performance.now() - started) / 1000;
    const after = await fileBytes(db, ws);
    const historyAfter = await historyRows(db);
    const growthMib = (after - before) / MIB;
    const added = Object.fromEntries(Object.entries(historyAfter).map(([t, n]) => [`${t}_rows`, n - (historyBefore[t] ?? 0)]));
    return figure('history_growth_mib', size, [growthMib], {
      note: `${days} daily corrections of ${date}, every replaced row kept`,
      details: {
        corrections: days,
        database_mib_before: before / MIB,
        database_mib_after: after / MIB,
        seconds_per_correction: seconds / days,
        ...added,
      },
    });
  } finally {
    db.close();
  }
}

/** The file's size once everything is checkpointed into it (the WAL emptied). */
async function fileBytes(db: Database, ws: BenchWorkspace): Promise<number> {
  await db.run('force checkpoint');
  return statSync(ws.config.database).size;
}

async function historyRows(db: Database): Promise<Record<string, number>> {
  const out: Record<string, number> = {};
  for (const { table } of KEPT_TABLES) {
    const [exists] = await db.all(`select 1 from duckdb_tables() where table_name = $1`, [`${table}_history`]);
    if (!exists) continue;
    const [{ n }] = await db.all<{ n: number }>(`select count(*)::integer as n from ${table}_history`);
    out[`${table}_history`] = n;
  }
  return out;
}
