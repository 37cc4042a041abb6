import { requireInteger } from './checks.ts';

/**
 * Moments of one series. Two passes: the mean first, then squared deviations from it,
 * with the "corrected two-pass" term (Chan, Golub and LeVeque, "Algorithms for
 * computing the sample variance", The American Statistician 37(3), 1983) that removes
 * the rounding left in the mean. Daily returns sit near zero but a series of prices or
 * of returns around an offset would lose digits with the one-pass sum-of-squares.
 */

/** Arithmetic mean, sum x_i / n. Throws for an empty series. */
export function mean(x: Float64Array): number {
  requireInteger('mean', 'x.length', x.length, 1);
  let sum = 0;
  for (let i = 0; i < x.length; i++) sum += x[i];
  return sum / x.length;
}

/** Sample variance, sum (x_i - mean)^2 / (n - 1). Throws for fewer than 2 values. */
export function sampleVariance(x: Float64Array): number {
  requireInteger('sampleVariance', 'x.length', x.length, 2);
  const m = mean(x);
  let squares = 0;
  let residual = 0;
  for (let i = 0; i < x.length; i++) {
    const d = x[i] - m;
    squares += d * d;
    residual += d;
  }
  // never below zero: a constant series can round to -1e-35 otherwise
  return Math.max(0, squares - (residual * residual) / x.length) / (x.length - 1);
}

/** Sample standard deviation, sqrt of `sampleVariance`. */
export function sampleStdDev(x: Float64Array): number {
  return Math.sqrt(sampleVariance(x));
}
