import type { Config } from '../config/load.ts';
import { localDay } from './moves.ts';

/**
 * The bounds a delivered value must fall within to be believed: a row dated in year 0 or
 * 9999, or a price of 5e-324 or 1e308, parses fine and then breaks every later figure, so
 * it is refused at the door. Fixed for one file when it is received.
 */
export interface Plausibility {
  /** 'YYYY-MM-DD', inclusive. */
  earliestDate: string;
  /** 'YYYY-MM-DD', inclusive: the receiving day plus `ingest.maxDaysAhead`. */
  latestDate: string;
  /** Smallest magnitude of a price, rate or non-zero quantity. */
  minMagnitude: number;
  /** Largest magnitude of a price, rate or quantity. */
  maxMagnitude: number;
  /** How far a benchmark snapshot's weights may add up away from 1. */
  weightSumTolerance: number;
}

export function plausibilityFor(config: Config, receivedAt: Date): Plausibility {
  const { earliestDate, maxDaysAhead, minMagnitude, maxMagnitude, benchmarkWeightTolerance } = config.ingest;
  // counted from the receiving day in local time, as the archive folder is named
  const latest = new Date(receivedAt.getFullYear(), receivedAt.getMonth(), receivedAt.getDate() + maxDaysAhead);
  return { earliestDate, latestDate: localDay(latest), minMagnitude, maxMagnitude, weightSumTolerance: benchmarkWeightTolerance };
}

