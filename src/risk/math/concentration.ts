/**
 * How concentrated a book is, from its weights (cash included, adding up to 1).
 */

/**
 * Sum of the `count` largest absolute weights (the largest-10 weight by default). For a
 * long-only book that is the share of value in its largest holdings; a short counts by
 * its size, as a large short concentrates risk as much as a large long.
 */
export function largestWeightsShare(w: Float64Array, count = 10): number {
  if (!Number.isInteger(count) || count < 1) throw new Error(`largestWeightsShare: count must be an integer >= 1, got ${count}`);
  const sizes = new Float64Array(w.length);
  for (let i = 0; i < w.length; i++) {
    if (!Number.isFinite(w[i])) throw new Error(`largestWeightsShare: w[${i}] must be finite, got ${w[i]}`);
    sizes[i] = Math.abs(w[i]);
  }
  sizes.sort();
  let total = 0;
  for (let k = 0; k < Math.min(count, sizes.length); k++) total += sizes[sizes.length - 1 - k];
  return total;
}

/**
 * Effective number of holdings 1 / sum_i w_i^2, the inverse of the Herfindahl-Hirschman
 * index on weights (O. C. Herfindahl, 1950; A. O. Hirschman, 1945): n for n equal
 * weights, 1 for a single holding. Throws when every weight is zero (no book to measure).
 */
export function effectiveNumberOfHoldings(w: Float64Array): number {
  let squares = 0;
  for (let i = 0; i < w.length; i++) {
    if (!Number.isFinite(w[i])) throw new Error(`effectiveNumberOfHoldings: w[${i}] must be finite, got ${w[i]}`);
    squares += w[i] * w[i];
  }
  if (squares === 0) throw new Error('effectiveNumberOfHoldings: every weight is zero');
  return 1 / squares;
}
