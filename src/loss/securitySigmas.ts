import { ewmaVarianceUpdate } from '../risk/math/ewma.ts';
import type { ReturnPanel } from '../risk/inputs/panels.ts';

/**
 * Each security's EWMA daily variance after each date (T x N, NaN while out), for the
 * filtered historical simulation, whose sigmaAfter[d * n + j] is its square root: the
 * forecast for the date after row d, from the returns up to and including d. It is the
 * diagonal of the risk stage's EWMA matrix (src/risk/estimators/ewma.ts), with the same
 * lambda and the same entry rule: a security enters once it has seedDays consecutive
 * returns, its variance the EWMA-weighted mean of their squares,
 * sum_u (1 - lambda) lambda^k r_u^2 / (1 - lambda^seedDays); a missing return takes it out
 * until it has seedDays consecutive returns again. Computed in place from row
 * `fromRow` on, continuing each security's recursion from its variance at fromRow - 1
 * (a replay when fromRow is 0). A row depends on the rows before it only through that
 * variance and, for an entry, the panel's run lengths and the last seedDays returns, so
 * the rows before fromRow may come from a stored state.
 */
export function continueSecurityVariances(panel: ReturnPanel, lambda: number, seedDays: number, variances: Float64Array, fromRow: number): void {
  const t = panel.dates.length;
  const n = panel.securityIds.length;
  const norm = 1 - lambda ** seedDays;
  for (let j = 0; j < n; j++) {
    const series = panel.returnsBySecurity.subarray(j * t, (j + 1) * t);
    let variance = fromRow > 0 ? variances[(fromRow - 1) * n + j] : Number.NaN;
    for (let d = fromRow; d < t; d++) {
      const r = series[d];
      if (!Number.isFinite(r)) {
        variance = Number.NaN;
      } else if (Number.isFinite(variance)) {
        variance = ewmaVarianceUpdate(variance, r, lambda);
      } else if (panel.runLength[d * n + j] >= seedDays) {
        let sum = 0;
        for (let k = 0; k < seedDays; k++) sum += (1 - lambda) * lambda ** k * series[d - k] * series[d - k];
        variance = sum / norm;
      }
      variances[d * n + j] = variance;
    }
  }
}
