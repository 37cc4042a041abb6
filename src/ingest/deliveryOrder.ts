import { statSync } from 'node:fs';
import path from 'node:path';
import type { Config } from '../config/load.ts';
import type { FileKind } from '../config/schema.ts';
import { matchSource } from './sourceMatch.ts';

/** Reference data and rates before prices, prices before the positions valued with them. */
const KIND_RANK: Record<FileKind, number> = { securities: 0, fx: 1, prices: 2, positions: 3, benchmarks: 4 };
const UNKNOWN_RANK = 5;

/**
 * The order a batch's files are applied in: by kind (securities, fx, prices, positions, benchmarks,
 * then names no source matches), within a kind by arrival time (the file's mtime, when
 * its writing ended), then by name. A correction that lands after its original is
 * applied after it, so it wins. A file gone from the inbox sorts last (it is skipped).
 */
export function orderDeliveries(config: Config, files: readonly string[]): string[] {
  const keyed = files.map((file) => {
    const kind = matchSource(config.sources, path.basename(file))?.kind;
    return { file, rank: kind === undefined ? UNKNOWN_RANK : KIND_RANK[kind], arrived: mtimeOrInfinity(file) };
  });
  keyed.sort((a, b) => a.rank - b.rank || a.arrived - b.arrived || path.basename(a.file).localeCompare(path.basename(b.file)));
  return keyed.map((k) => k.file);
}

function mtimeOrInfinity(file: string): number {
  try {
    return statSync(file).mtimeMs;
  } catch {
    return Number.POSITIVE_INFINITY;
  }
}
