import { readdirSync, readFileSync } from 'node:fs';
import path from 'node:path';
import type { Logger } from 'pino';
import type { Database } from './database.ts';

export const SQL_DIR = path.resolve(import.meta.dirname, '../../sql');

const MIGRATION_NAME = /^(\d{4})_([a-z][a-z0-9_]*)\.sql$/;
const VIEW_NAME = /^(\d{3})_([a-z]+)_([a-z][a-z0-9_]*)\.sql$/;

export interface SqlFile {
  order: number;
  file: string;
  /** For a view: the view's name (the stem after the number). */
  name: string;
  text: string;
}

/** Lists a folder's SQL files in order; any file not of the expected shape is an error, not skipped. */
export function listSqlFiles(dir: string, kind: 'migration' | 'view'): SqlFile[] {
  const shape = kind === 'migration' ? MIGRATION_NAME : VIEW_NAME;
  const files = readdirSync(dir).filter((f) => !f.startsWith('.'));
  const out = files.map((file) => {
    const m = shape.exec(file);
    if (!m) throw new Error(`${path.join(dir, file)}: not a ${kind} file name (expected ${shape.source})`);
    const name = kind === 'migration' ? m[2] : `${m[2]}_${m[3]}`;
    return { order: Number(m[1]), file, name, text: readFileSync(path.join(dir, file), 'utf8') };
  });
  out.sort((a, b) => a.order - b.order);
  for (let i = 1; i < out.length; i++) {
    if (out[i].order === out[i - 1].order) throw new Error(`${dir}: ${out[i - 1].file} and ${out[i].file} share a number`);
  }
  return out;
}

/** Applies each migration not yet recorded in schema_version, each in its own transaction. */
export async function applyMigrations(db: Database, log: Logger, dir = path.join(SQL_DIR, 'migrations')): Promise<number> {
  await db.run(
    'create table if not exists schema_version (version integer primary key, name varchar not null, applied_at timestamptz not null default now())',
  );
  const done = new Set((await db.all<{ version: number }>('select version from schema_version')).map((r) => r.version));
  let applied = 0;
  for (const m of listSqlFiles(dir, 'migration')) {
    if (done.has(m.order)) continue;
    try {
      await db.transaction(async () => {
        await db.run(m.text);
        await db.run('insert into schema_version (version, name) values ($1, $2)', [m.order, m.name]);
      });
    } catch (cause) {
      throw new Error(`migration ${m.file} failed`, { cause });
    }
    log.info({ stage: 'storage', migration: m.file }, 'migration applied');
    applied++;
  }
  return applied;
}

/** Re-creates every view (CREATE OR REPLACE), in order, each in its own transaction. */
export async function applyViews(db: Database, log: Logger, dir = path.join(SQL_DIR, 'views')): Promise<void> {
  for (const v of listSqlFiles(dir, 'view')) {
    if (!new RegExp(`create\\s+or\\s+replace\\s+view\\s+${v.name}\\b`, 'i').test(v.text)) {
      throw new Error(`view ${v.file} failed: it must create or replace view ${v.name}`);
    }
    try {
      await db.transaction(() => db.run(v.text));
    } catch (cause) {
      throw new Error(`view ${v.file} failed`, { cause });
    }
    log.debug({ stage: 'storage', view: v.file }, 'view applied');
  }
}
