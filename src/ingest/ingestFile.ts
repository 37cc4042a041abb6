import path from 'node:path';
import type { Logger } from 'pino';
import type { Config } from '../config/load.ts';
import type { FileKind, SourceConfig } from '../config/schema.ts';
import { type Rejection, type Result } from '../errors.ts';
import type { Database } from '../storage/database.ts';
import { checkComplete, type HoldReason } from './completeness.ts';
import { faultPoint } from '../faults.ts';
import { sha256OfFile } from './fingerprint.ts';
import { readColumnMapping, type ColumnMapping } from './header.ts';
import { withFix } from './hints.ts';
import { commitGuard } from './commitGuard.ts';
import { holdFile } from './holdFile.ts';
import { UNREAD } from './holds.ts';
import { findIngested } from './ledger.ts';
import { layoutOf, type KindLayout } from './layout.ts';
import { loadFile } from './load.ts';
import { archiveDir, freePath } from './moves.ts';
import { neverPricedSecurities } from './neverPriced.ts';
import { refusalOf } from './ownCopy.ts';
import { plausibilityFor, type Plausibility } from './plausibility.ts';
import { alreadyLoaded, recordRejected, settle } from './recordOutcome.ts';
import { matchSource } from './sourceMatch.ts';
import { dropStage, stageFile } from './stage.ts';
import { findFirstProblem } from './validate.ts';

export interface IngestOutcome {
  status: 'ingested' | 'duplicate' | 'rejected' | 'held';
  /** The ledger row; null while held (a held file has none yet). */
  fileId: number | null;
  name: string;
  kind: FileKind | null;
  rows: number;
  /** 'YYYY-MM-DD': the earliest date the file touches. */
  minDate: string | null;
  /** Positions files: the portfolios in it; otherwise null (every portfolio may be affected). */
  portfolios: string[] | null;
  /** Where the file is now (still the inbox while held). */
  movedTo: string;
  rejection?: Rejection;
  /** Status duplicate: the file_id that first delivered these bytes. */
  duplicateOf?: number;
  /** Status held: why the file stays in the inbox. */
  hold?: HoldReason;
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
  const bounds = plausibilityFor(config, receivedAt);
  const started = performance.now();
  const matched = matchSource(config.sources, name);
  const base = { name, kind: matched?.kind ?? null, source: matched?.name ?? null, receivedAt };
  const refusal = await refusalOf(db, filePath, name);
  // no ledger row (it would need the file's bytes); a hold row without a digest, until the name goes or a copy of its own replaces it
  if (refusal) return holdFile(db, flog, filePath, { ...base, sha256: UNREAD }, refusal);
  // hashing runs in this thread while DuckDB reads the file in its own
  const hashing = sha256OfFile(filePath);
  hashing.catch(() => undefined); // awaited below; a read error surfaces there, or first from the header
  const complete = await checkComplete(config, filePath, name);
  if (complete.state === 'held') return holdFile(db, flog, filePath, { ...base, sha256: await hashing }, complete.hold);
  const prepared =
    complete.state === 'rejected'
      ? { ok: false as const, rejection: complete.rejection }
      : matched
        ? await prepare(filePath, name, matched)
        : unknownKind(config, name);

  let sha256: string;
  let rejection: Rejection;
  if (prepared.ok) {
    const { source, layout, mapping } = prepared.value;
    const planned = freePath(archiveDir(config.archive, receivedAt), name);
    const manifest = complete.state === 'complete' ? complete.manifest : null;
    const guard = commitGuard(db, config, filePath, name, source.kind, manifest);
    const attempt = await loadFile(db, filePath, source, layout, mapping, bounds, hashing, { ...base, archivedPath: planned }, guard);
    if (attempt.kind === 'held') return holdFile(db, flog, filePath, { ...base, sha256: attempt.sha256 }, attempt.hold);
    if (attempt.kind === 'refused') return recordRejected(db, config, flog, filePath, { ...base, sha256: attempt.sha256 }, attempt.rejection);
    if (attempt.kind === 'known') return alreadyLoaded(db, config, flog, filePath, attempt.earlier, { ...base, sha256: attempt.sha256 });
    if (attempt.kind === 'loaded') {
      // committed with its ledger row: from here a kill leaves the file in the inbox, and alreadyLoaded() finishes the move
      faultPoint('committed');
      const movedTo = await settle(db, config, filePath, planned, attempt.fileId);
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
    rejection = await diagnose(db, filePath, name, { ...prepared.value, bounds }, attempt.cause);
  } else {
    sha256 = await hashing;
    const earlier = await findIngested(db, sha256);
    if (earlier) return alreadyLoaded(db, config, flog, filePath, earlier, { ...base, sha256 });
    rejection = prepared.rejection;
  }

  return recordRejected(db, config, flog, filePath, { ...base, sha256 }, withFix(rejection, matched ?? null));
}

interface Prepared {
  source: SourceConfig;
  layout: KindLayout;
  mapping: ColumnMapping;
}

type Rules = Prepared & { bounds: Plausibility };

/** The source's layout and the header mapped onto it. */
async function prepare(filePath: string, name: string, source: SourceConfig): Promise<Result<Prepared>> {
  const layout = layoutOf(source.kind);
  const mapped = await readColumnMapping(filePath, name, source, layout);
  return mapped.ok ? { ok: true, value: { source, layout, mapping: mapped.value } } : mapped;
}

/** Why the load failed: the file staged again and examined for its first bad row. */
async function diagnose(db: Database, filePath: string, name: string, rules: Rules, loadError: unknown): Promise<Rejection> {
  const { source, layout, mapping, bounds } = rules;
  try {
    const staged = await stageFile(db, filePath, name, source, layout, mapping);
    const problem = staged.ok ? await findFirstProblem(db, layout, source, bounds, name) : staged.rejection;
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
