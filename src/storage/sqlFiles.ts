import { readdirSync, readFileSync } from 'node:fs';
import path from 'node:path';
import type { Logger } from 'pino';
import type { Database } from './database.ts';

export const SQL_DIR = path.resolve(import.meta.dirname, '../../sql');
export const LADDER_DIR = path.join(SQL_DIR, 'ladder');
/** Macros every ladder step and TypeScript query may use (is_cash, is_base_cash, ...): each rule defined once. */
const RULES_FILE = path.join(SQL_DIR, 'rules.sql');

const MIGRATION_NAME = /^(\d{4})_([a-z][a-z0-9_]*)\.sql$/;
/** `NNN_<layer>_<stored|view>_<stem>.sql`: a stored step fills table derived_<stem>, a view step creates view <layer>_<stem>. */
const STEP_NAME = /^(\d{3})_([a-z]+)_(stored|view)_([a-z][a-z0-9_]*)\.sql$/;

/** The ladder's layers in the order their steps must come. */
export const LAYERS = ['clean', 'align', 'hold', 'value', 'exposure', 'ret', 'check', 'trace'] as const;

export interface Migration {
  order: number;
  file: string;
  name: string;
  text: string;
}

export interface LadderStep {
  order: number;
  file: string;
  layer: (typeof LAYERS)[number];
  /** stored: refilled from the raw tables by refreshDerived(); view: re-created by applyViews() at every start. */
  kind: 'stored' | 'view';
  /** The database object the step defines: the derived table or the view. */
  object: string;
  text: string;
}

interface NumberedFile {
  order: number;
  file: string;
  parts: string[];
  text: string;
}

/** Reads a folder's SQL files sorted by number; a file of another shape or a repeated number is an error, not skipped. */
function readNumbered(dir: string, shape: RegExp, what: string): NumberedFile[] {
  const files = readdirSync(dir).filter((f) => !f.startsWith('.'));
  const out = files.map((file) => {
    const m = shape.exec(file);
    if (!m) throw new Error(`${path.join(dir, file)}: not a ${what} file name (expected ${shape.source})`);
    return { order: Number(m[1]), file, parts: m.slice(2), text: readFileSync(path.join(dir, file), 'utf8') };
  });
  out.sort((a, b) => a.order - b.order);
  for (let i = 1; i < out.length; i++) {
    if (out[i].order === out[i - 1].order) throw new Error(`${dir}: ${out[i - 1].file} and ${out[i].file} share a number`);
  }
  return out;
}

export function listMigrations(dir: string): Migration[] {
  return readNumbered(dir, MIGRATION_NAME, 'migration').map(({ order, file, parts, text }) => ({ order, file, name: parts[0], text }));
}

/**
 * Lists the ladder's steps in order and checks what the names promise: a known layer, layers
 * in their order, the step defines the object its name gives, and it reads no object of a
 * later step (so running the stored steps in order never reads a table not yet refilled).
 */
export function listLadder(dir = LADDER_DIR): LadderStep[] {
  const steps = readNumbered(dir, STEP_NAME, 'ladder step').map(({ order, file, parts, text }): LadderStep => {
    const [layer, kind, stem] = parts;
    if (!isLayer(layer)) throw new Error(`${path.join(dir, file)}: unknown layer "${layer}" (known: ${LAYERS.join(', ')})`);
    const object = kind === 'stored' ? `derived_${stem}` : `${layer}_${stem}`;
    return { order, file, layer, kind: kind as LadderStep['kind'], object, text };
  });
  steps.forEach((step, i) => {
    const previous = steps[i - 1];
    if (previous && LAYERS.indexOf(step.layer) < LAYERS.indexOf(previous.layer)) {
      throw new Error(`${step.file}: layer ${step.layer} comes before ${previous.layer} (${previous.file}); layers go ${LAYERS.join(' → ')}`);
    }
    const defines = step.kind === 'stored' ? `insert\\s+into\\s+${step.object}\\b` : `create\\s+or\\s+replace\\s+view\\s+${step.object}\\b`;
    if (!new RegExp(defines, 'i').test(step.text)) {
      throw new Error(`${step.file}: it must ${step.kind === 'stored' ? 'insert into' : 'create or replace view'} ${step.object}`);
    }
    const code = step.text.replace(/--.*$/gm, '');
    const later = steps.slice(i + 1).find((s) => new RegExp(`\\b${s.object}\\b`, 'i').test(code));
    if (later) throw new Error(`${step.file}: reads ${later.object}, which a later step defines (${later.file})`);
  });
  return steps;
}

function isLayer(word: string): word is LadderStep['layer'] {
  return (LAYERS as readonly string[]).includes(word);
}

/** Applies each migration not yet recorded in schema_version, each in its own transaction. */
const MIGRATIONS_DIR = path.join(SQL_DIR, 'migrations');

async function recordedMigrations(db: Database): Promise<Set<number>> {
  return new Set((await db.all<{ version: number }>('select version from schema_version')).map((r) => r.version));
}

/** Migrations this code knows that the database has not recorded (a reader cannot apply them). */
export async function missingMigrations(db: Database, dir = MIGRATIONS_DIR): Promise<string[]> {
  const done = await recordedMigrations(db);
  return listMigrations(dir).filter((m) => !done.has(m.order)).map((m) => m.file);
}

export async function applyMigrations(db: Database, log: Logger, dir = MIGRATIONS_DIR): Promise<number> {
  await db.run(
    'create table if not exists schema_version (version integer primary key, name varchar not null, applied_at timestamptz not null default now())',
  );
  const done = await recordedMigrations(db);
  let applied = 0;
  for (const m of listMigrations(dir)) {
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

/**
 * Re-creates the shared rules (sql/rules.sql, macros such as is_cash) and then the ladder's
 * views (CREATE OR REPLACE), in order, each in its own transaction; stored steps are left to
 * refreshDerived(), which runs after and reads the same macros.
 */
export async function applyViews(db: Database, log: Logger, dir = LADDER_DIR): Promise<void> {
  try {
    await db.transaction(() => db.run(readFileSync(RULES_FILE, 'utf8')));
  } catch (cause) {
    throw new Error(`rules ${path.basename(RULES_FILE)} failed`, { cause });
  }
  for (const v of listLadder(dir).filter((s) => s.kind === 'view')) {
    try {
      await db.transaction(() => db.run(v.text));
    } catch (cause) {
      throw new Error(`view ${v.file} failed`, { cause });
    }
    log.debug({ stage: 'storage', view: v.file }, 'view applied');
  }
}
