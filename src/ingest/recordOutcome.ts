import { existsSync, renameSync, rmSync } from 'node:fs';
import path from 'node:path';
import type { Logger } from 'pino';
import type { Config } from '../config/load.ts';
import type { FileKind } from '../config/schema.ts';
import { insertAlert } from '../alerts/outbox.ts';
import { fileLine, formatRejection, type Rejection } from '../errors.ts';
import type { Database } from '../storage/database.ts';
import { markerSuffix } from './completeness.ts';
import { faultPoint } from '../faults.ts';
import { finishMove, unfinishedMove } from './finishMove.ts';
import { releaseHolds } from './holds.ts';
import type { IngestOutcome } from './ingestFile.ts';
import { portfoliosOf, recordFile, updateArchivedPath, type EarlierDelivery } from './ledger.ts';
import { MANIFEST_SUFFIX } from './manifest.ts';
import { archiveDir, freePath, moveWithoutOverwrite, writeReasonFile } from './moves.ts';

export interface Delivery {
  name: string;
  sha256: string;
  kind: FileKind | null;
  source: string | null;
  receivedAt: Date;
}

/**
 * A rejected file: its ledger row first (with the quarantine place it will take), then
 * the reason file, then the move. A kill anywhere leaves either the file in the inbox
 * with its row (the next start finds the row and finishes) or the file in quarantine
 * with its row; never a file without a row.
 */
export async function recordRejected(
  db: Database,
  config: Config,
  flog: Logger,
  filePath: string,
  d: Delivery,
  rejection: Rejection,
): Promise<IngestOutcome> {
  const unfinished = await unfinishedMove(db, filePath, d.name, d.sha256, 'rejected');
  const target = unfinished?.archivedPath ?? freePath(config.quarantine, d.name);
  const fileId =
    unfinished?.fileId ??
    (await recordFile(db, {
      ...d, rows: 0, status: 'rejected', error: formatRejection(rejection), archivedPath: target, minDate: null, maxDate: null, duplicateOf: null,
    }));
  faultPoint('recorded');
  // operations hear of it: a rejected correction or daily file leaves its data out of risk
  // until it is delivered again (one alert per rejected delivery; a resumed move finds it there)
  await insertAlert(db, {
    alertId: `file-rejected-${fileId}`,
    kind: 'file_rejected',
    portfolioId: null,
    asOf: null,
    payload: {
      level: 'rejected',
      episode_state: 'open',
      file: d.name,
      code: rejection.code,
      quarantined_as: path.basename(target),
      text: `${d.name} rejected, nothing of it loaded, moved to quarantine: ${formatRejection(rejection)}`,
    },
  });
  writeReasonFile(target, rejection, d.receivedAt);
  const movedTo = await settle(db, config, filePath, target, fileId);
  if (movedTo !== target) renameSync(`${target}.reason.txt`, `${movedTo}.reason.txt`);
  flog.warn({ fileId, movedTo, ...rejection, line: fileLine(rejection), resumed: unfinished !== null }, 'file rejected');
  return { status: 'rejected', fileId, name: d.name, kind: d.kind, rows: 0, minDate: null, portfolios: null, movedTo, rejection };
}

/**
 * These bytes were loaded before. Under the same name with its move unfinished, the
 * process stopped between commit and move: finish the move and report the load again
 * (its recompute may not have run). Otherwise it is a re-delivery: record a duplicate
 * (row first, then the move, as for a rejection).
 */
export async function alreadyLoaded(
  db: Database,
  config: Config,
  flog: Logger,
  filePath: string,
  earlier: EarlierDelivery,
  d: Delivery,
): Promise<IngestOutcome> {
  const loadedHere = earlier.name === d.name ? await unfinishedMove(db, filePath, d.name, d.sha256, 'ingested') : null;
  if (loadedHere) {
    const movedTo = await settle(db, config, filePath, loadedHere.archivedPath, loadedHere.fileId);
    flog.info({ fileId: earlier.fileId, movedTo }, 'file was loaded before an interrupted move; move finished');
    const portfolios = earlier.kind === 'positions' ? await portfoliosOf(db, earlier.fileId) : null;
    return { status: 'ingested', fileId: earlier.fileId, name: d.name, kind: earlier.kind, rows: earlier.rows, minDate: earlier.minDate, portfolios, movedTo };
  }

  const here = path.resolve(filePath);
  const unfinished = await unfinishedMove(db, filePath, d.name, d.sha256, 'duplicate');
  // re-ingesting the archived copy itself: record it, leave it where it is
  const target = unfinished?.archivedPath ?? (here === earlier.archivedPath ? here : freePath(archiveDir(config.archive, d.receivedAt), d.name));
  const fileId =
    unfinished?.fileId ??
    (await recordFile(db, {
      ...d, rows: 0, status: 'duplicate', error: null, archivedPath: target, minDate: null, maxDate: null, duplicateOf: earlier.fileId,
    }));
  faultPoint('recorded');
  const movedTo = target === here ? here : await settle(db, config, filePath, target, fileId);
  flog.info({ fileId, duplicateOf: earlier.fileId, firstName: earlier.name, movedTo }, 'file is a duplicate; nothing added');
  return { status: 'duplicate', fileId, name: d.name, kind: d.kind, rows: 0, minDate: null, portfolios: null, movedTo, duplicateOf: earlier.fileId };
}

/**
 * Moves a recorded file out of the inbox to its recorded place (or, if that was taken
 * meanwhile, the next free name, then corrected in the ledger); its holds end, its
 * done-marker goes and its manifest follows it (after it: a kill in between leaves the
 * manifest, which a later delivery of the name without one of its own fails to match).
 */
export async function settle(db: Database, config: Config, filePath: string, target: string, fileId: number): Promise<string> {
  const movedTo = finishMove(filePath, target);
  faultPoint('moved');
  if (movedTo !== target) await updateArchivedPath(db, fileId, movedTo);
  await releaseHolds(db, path.basename(filePath));
  const marker = markerSuffix(config);
  if (marker !== null) rmSync(`${filePath}${marker}`, { force: true });
  const manifest = `${filePath}${MANIFEST_SUFFIX}`;
  if (config.ingest.manifest === 'required' && existsSync(manifest)) {
    moveWithoutOverwrite(manifest, path.dirname(movedTo), `${path.basename(movedTo)}${MANIFEST_SUFFIX}`);
  }
  return movedTo;
}
