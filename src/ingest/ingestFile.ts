import type { Logger } from 'pino';
import type { Config } from '../config/load.ts';
import type { FileKind } from '../config/schema.ts';
import type { Rejection } from '../errors.ts';
import type { Database } from '../storage/database.ts';

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
}

// PLACEHOLDER: the ingest stage replaces this.
export async function ingestFile(_db: Database, _config: Config, _log: Logger, _filePath: string): Promise<IngestOutcome> {
  throw new Error('ingestFile is not built yet');
}
