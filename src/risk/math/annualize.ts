import { requireNonNegative, requirePositive } from './checks.ts';

/**
 * Annualized return from the mean daily log return m: exp(A m) - 1, since A daily log
 * returns add up to the year's log return (continuous compounding; common practice,
 * no source). expm1 keeps the digits of small returns.
 */
export function annualizedReturn(meanLogReturn: number, periodsPerYear: number): number {
  requirePositive('annualizedReturn', 'periodsPerYear', periodsPerYear);
  if (!Number.isFinite(meanLogReturn)) throw new Error(`annualizedReturn: meanLogReturn must be finite, got ${meanLogReturn}`);
  return Math.expm1(periodsPerYear * meanLogReturn);
}

/** Annualized volatility sqrt(A var) under independent daily returns (square-root-of-time rule). */
export function annualizedVolatility(dailyVariance: number, periodsPerYear: number): number {
  requirePositive('annualizedVolatility', 'periodsPerYear', periodsPerYear);
  requireNonNegative('annualizedVolatility', 'dailyVariance', dailyVariance);
  return Math.sqrt(periodsPerYear * dailyVariance);
}
