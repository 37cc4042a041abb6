import type { ReturnPanel } from './panels.ts';

/**
 * Enough history, the one rule of coverage: security j is covered at row d by an estimate
 * needing `days` returns (its window, the EWMA's seed) when each of the `days` valuation
 * dates ending at d has a return. check_data_quality's short_history applies the same
 * rule to the needs in pipeline_settings.history_days.
 */
export function hasFullHistory(panel: ReturnPanel, d: number, j: number, days: number): boolean {
  return panel.runLength[d * panel.securityIds.length + j] >= days;
}
