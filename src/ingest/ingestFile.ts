import { statSync, unlinkSync } from 'node:fs';
import path from 'node:path';
import type { Logger } from 'pino';
import type { Config } from '../config/load.ts';
import type { FileKind, SourceConfig } from '../config/schema.ts';
import { formatRejection, type Rejection, type Result } from '../errors.ts';
import type { Database } from '../storage/database.ts';
import { sha256OfFile } from './fingerprint.ts';
import { readColumnMapping, type ColumnMapping } from './header.ts';
import { findIngested, portfoliosOf, recordFile, updateArchivedPath, type EarlierDelivery } from './ledger.ts';
import { layoutOf, type KindLayout } from './layout.ts';
import { loadFile } from './load.ts';
import { neverPricedSecurities } from './neverPriced.ts';
import { archiveDir, freePath, moveWithoutOverwrite, quarantine } from './moves.ts';
import { matchSource } from './sourceMatch.ts';
import { dropStage, stageFile } from './stage.ts';
import { findFirstProblem } from './validate.ts';

export interface IngestOutcome {
  status: 'ingested' | 'duplicate' | 'rejected';
  fileId: number;
  name: string;
  kind: FileKind | null;
  rows: number;
  /** 'YYYY-MM-DD': the earliest date the file touches. */
  minDate: string | null;
  /** Positions files: the portfolios in it; otherwise null (every portfolio may be affected). */
  portfolios: string[] | null;
  movedTo: string;
  rejection?: Rejection;
  /** Status duplicate: the file_id that first delivered these bytes. */
  duplicateOf?: number;
  /** Positions files: held securities that have never had a price (their portfolios cannot be valued). */
  neverPriced?: string[];
}

/**
 * Loads one delivered file: recognise its kind by name, then in one transaction insert
 * its rows (typed and checked on the way from read_csv) and record it; afterwards move
 * it to the archive. A file that fails is staged and examined for its first bad row,
 * then moved to quarantine with a reason file. Bad input is an outcome, not an
 * exception; only machine and config faults throw. One file at a time per database.
 */
export async function ingestFile(db: Database, config: Config, log: Logger, filePath: string): Promise<IngestOutcome> {
  const name = path.basename(filePath);
  const flog = log.child({ stage: 'ingest', file: name });
  const receivedAt = new Date();
  const started = performance.now();
  // hashing runs in this thread while DuckDB reads the file in its own
  const hashing = sha256OfFile(filePath);
  hashing.catch(() => undefined); // awaited below; a read error surfaces there, or first from the header
  const matched = matchSource(config.sources, name);
  const prepared = matched ? await prepare(filePath, name, matched) : unknownKind(config, name);
  const base = { name, kind: matched?.kind ?? null, source: matched?.name ?? null, receivedAt };

  let sha256: string;
  let rejection: Rejection;
  if (prepared.ok) {
    const { source, layout, mapping } = prepared.value;
    const dir = archiveDir(config.archive, receivedAt);
    const planned = freePath(dir, name);
    const attempt = await loadFile(db, filePath, source, layout, mapping, hashing, { ...base, archivedPath: planned });
    if (attempt.kind === 'known') return alreadyLoaded(db, config, flog, filePath, attempt.earlier, { ...base, sha256: attempt.sha256 });
    if (attempt.kind === 'loaded') {
      // committed: from here a crash leaves the file in the inbox, and alreadyLoaded() finishes the move
      const movedTo = moveWithoutOverwrite(filePath, dir, name);
      if (movedTo !== planned) await updateArchivedPath(db, attempt.fileId, movedTo);
      const { rows, minDate, maxDate, portfolios } = attempt.summary;
      const seconds = (performance.now() - started) / 1000;
      flog.info(
        { fileId: attempt.fileId, kind: base.kind, source: base.source, rows, minDate, maxDate, movedTo, seconds, rowsPerSecond: Math.round(rows / seconds) },
        'file ingested',
      );
      const neverPriced = base.kind === 'positions' ? await neverPricedSecurities(db, attempt.fileId) : [];
      if (neverPriced.length > 0) {
        flog.warn({ fileId: attempt.fileId, securities: neverPriced }, 'positions name securities that have never had a price; their portfolios have no value until one arrives');
      }
      return { status: 'ingested', fileId: attempt.fileId, name, kind: base.kind, rows, minDate, portfolios, movedTo, ...(neverPriced.length > 0 ? { neverPriced } : {}) };
    }
    sha256 = attempt.sha256;
    const earlier = await findIngested(db, sha256);
    if (earlier) return alreadyLoaded(db, config, flog, filePath, earlier, { ...base, sha256 });
    rejection = await diagnose(db, filePath, name, source, layout, mapping, attempt.cause);
  } else {
    sha256 = await hashing;
    const earlier = await findIngested(db, sha256);
    if (earlier) return alreadyLoaded(db, config, flog, filePath, earlier, { ...base, sha256 });
    rejection = prepared.rejection;
  }

  const movedTo = quarantine(filePath, config.quarantine, rejection, receivedAt);
  const fileId = await recordFile(db, {
    ...base, sha256, rows: 0, status: 'rejected', error: formatRejection(rejection), archivedPath: movedTo, minDate: null, maxDate: null, duplicateOf: null,
  });
  flog.warn({ fileId, movedTo, ...rejection }, 'file rejected');
  return { status: 'rejected', fileId, name, kind: base.kind, rows: 0, minDate: null, portfolios: null, movedTo, rejection };
}

interface Prepared {
  source: SourceConfig;
  layout: KindLayout;
  mapping: ColumnMapping;
}

/** The source's layout and the header mapped onto it. */
async function prepare(filePath: string, name: string, source: SourceConfig): Promise<Result<Prepared>> {
  const layout = layoutOf(source.kind);
  const mapped = await readColumnMapping(filePath, name, source, layout);
  return mapped.ok ? { ok: true, value: { source, layout, mapping: mapped.value } } : mapped;
}

/** Why the load failed: the file staged again and examined for its first bad row. */
async function diagnose(
  db: Database,
  filePath: string,
  name: string,
  source: SourceConfig,
  layout: KindLayout,
  mapping: ColumnMapping,
  loadError: unknown,
): Promise<Rejection> {
  try {
    const staged = await stageFile(db, filePath, name, source, layout, mapping);
    const problem = staged.ok ? await findFirstProblem(db, layout, source, name) : staged.rejection;
    // the load and the checks apply the same rules; a failure neither explains is the machine's
    if (problem === null) throw new Error(`${name}: the load failed and no row breaks a rule`, { cause: loadError });
    return problem;
  } finally {
    await dropStage(db);
  }
}

function unknownKind(config: Config, name: string): Result<never> {
  const patterns = config.sources.map((s) => s.pattern).join(', ');
  return {
    ok: false,
    rejection: {
      code: 'unknown_kind',
      file: name,
      value: name,
      expected: `a name matching one of ${patterns}`,
      message: `the name matches no source pattern (${patterns})`,
    },
  };
}

/**
 * These bytes were loaded before. Under the same name and not yet in the archive, the
 * process stopped between commit and move: finish the move and report the load again
 * (its recompute may not have run). Otherwise it is a re-delivery: record a duplicate.
 */
async function alreadyLoaded(
  db: Database,
  config: Config,
  flog: Logger,
  filePath: string,
  earlier: EarlierDelivery,
  base: { name: string; sha256: string; kind: FileKind | null; source: string | null; receivedAt: Date },
): Promise<IngestOutcome> {
  const here = path.resolve(filePath);
  const archived = statOrNull(earlier.archivedPath);
  const sameFile = archived !== null && sameInode(archived, statSync(here));
  if (earlier.name === base.name && here !== earlier.archivedPath && (archived === null || sameFile)) {
    let movedTo = earlier.archivedPath;
    if (sameFile) unlinkSync(here); // the link into the archive was made, only the unlink was lost
    else movedTo = moveWithoutOverwrite(here, path.dirname(earlier.archivedPath), path.basename(earlier.archivedPath));
    if (movedTo !== earlier.archivedPath) await updateArchivedPath(db, earlier.fileId, movedTo);
    flog.info({ fileId: earlier.fileId, movedTo }, 'file was loaded before an interrupted move; move finished');
    const portfolios = earlier.kind === 'positions' ? await portfoliosOf(db, earlier.fileId) : null;
    return { status: 'ingested', fileId: earlier.fileId, name: base.name, kind: earlier.kind, rows: earlier.rows, minDate: earlier.minDate, portfolios, movedTo };
  }

  // re-ingesting the archived copy itself: record it, leave it where it is
  const movedTo = here === earlier.archivedPath ? here : moveWithoutOverwrite(here, archiveDir(config.archive, base.receivedAt), base.name);
  const fileId = await recordFile(db, {
    ...base, rows: 0, status: 'duplicate', error: null, archivedPath: movedTo, minDate: null, maxDate: null, duplicateOf: earlier.fileId,
  });
  flog.info({ fileId, duplicateOf: earlier.fileId, firstName: earlier.name, movedTo }, 'file is a duplicate; nothing added');
  return { status: 'duplicate', fileId, name: base.name, kind: base.kind, rows: 0, minDate: null, portfolios: null, movedTo, duplicateOf: earlier.fileId };
}

function statOrNull(p: string) {
  try {
    return statSync(p);
  } catch {
    return null;
  }
}

function sameInode(a: { dev: number; ino: number }, b: { dev: number; ino: number }): boolean {
  return a.dev === b.dev && a.ino === b.ino;
}
