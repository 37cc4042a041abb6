import { statSync } from 'node:fs';
import type { Config } from '../config/load.ts';
import type { FileKind } from '../config/schema.ts';
import type { Database } from '../storage/database.ts';
import { redeliveredAfterHold } from './holds.ts';
import type { CommitGuard } from './load.ts';
import { manifestMismatch, type Manifest } from './manifest.ts';
import { snapshotDrop } from './snapshotDrop.ts';

/**
 * The checks a file passes before its commit, on the rows just inserted: with a
 * manifest, its data rows and sha256 must be the ones stated (else it is refused); a
 * positions file, unless confirmed (named in `ingest.confirmedFiles`, or the same bytes
 * delivered again after a hold), may not drop most of a portfolio's holdings (else it
 * is held).
 */
export function commitGuard(db: Database, config: Config, filePath: string, name: string, kind: FileKind, manifest: Manifest | null): CommitGuard {
  const share = config.ingest.snapshotKeepShare;
  return async (fileId, sha256, rows) => {
    const mismatch = manifest === null ? null : manifestMismatch(name, manifest, { rows, sha256 });
    if (mismatch !== null) return { kind: 'refused', rejection: mismatch };
    if (kind !== 'positions' || share === 0 || config.ingest.confirmedFiles.includes(name)) return null;
    if (await redeliveredAfterHold(db, name, sha256, statSync(filePath).mtimeMs)) return null;
    const hold = await snapshotDrop(db, fileId, share);
    return hold === null ? null : { kind: 'held', hold };
  };
}
