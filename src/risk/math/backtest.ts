import { requireInteger, requireLength, requireOpenUnit } from './checks.ts';
import { normalCdf } from './normal.ts';

/**
 * VaR backtesting: exceptions, Kupiec's proportion-of-failures test, Christoffersen's
 * independence test and the Basel traffic-light zone.
 */

/**
 * exception_t = 1 when the loss -pnl_t exceeds the VaR predicted for that day (strictly,
 * as the SPEC's "loss > VaR"). Throws for a missing figure: an untested day must be
 * left out by the caller, not counted as a pass.
 */
export function exceptions(pnl: Float64Array, predictedVaR: Float64Array): Uint8Array {
  const fn = 'exceptions';
  requireLength(fn, 'predictedVaR', predictedVaR.length, pnl.length);
  const out = new Uint8Array(pnl.length);
  for (let t = 0; t < pnl.length; t++) {
    if (!Number.isFinite(pnl[t])) throw new Error(`${fn}: pnl[${t}] must be finite, got ${pnl[t]}`);
    if (!Number.isFinite(predictedVaR[t])) throw new Error(`${fn}: predictedVaR[${t}] must be finite, got ${predictedVaR[t]}`);
    out[t] = -pnl[t] > predictedVaR[t] ? 1 : 0;
  }
  return out;
}

/**
 * Survival function of the chi-squared distribution, P(X > x), for 1 and 2 degrees of
 * freedom, the two the tests here need. 1 d.o.f.: X = Z^2, so P(X > x) = 2 (1 - Phi(sqrt x))
 * = erfc(sqrt(x / 2)); 2 d.o.f.: the exponential with mean 2, exp(-x / 2) (both the
 * regularized upper gamma Q(k/2, x/2) at k = 1, 2; Abramowitz and Stegun 26.4; from memory).
 * Phi's lower tail keeps full relative accuracy, so small p-values keep their digits.
 */
export function chiSquaredSurvival(x: number, degreesOfFreedom: 1 | 2): number {
  const fn = 'chiSquaredSurvival';
  if (!(x >= 0)) throw new Error(`${fn}: x must be >= 0, got ${x}`);
  if (degreesOfFreedom === 1) return 2 * normalCdf(-Math.sqrt(x));
  if (degreesOfFreedom === 2) return Math.exp(-x / 2);
  throw new Error(`${fn}: degreesOfFreedom must be 1 or 2, got ${degreesOfFreedom}`);
}

export interface LikelihoodRatioTest {
  /** The likelihood-ratio statistic, >= 0. */
  lr: number;
  /** Its p-value, the chi-squared survival function at lr. */
  p: number;
}

/**
 * Kupiec's proportion-of-failures test (P. H. Kupiec, "Techniques for verifying the
 * accuracy of risk measurement models", Journal of Derivatives 3(2), 1995): x exceptions
 * in T days against the expected rate p = 1 - level,
 * LR = -2 ln[(1 - p)^(T - x) p^x] + 2 ln[(1 - x/T)^(T - x) (x/T)^x], chi-squared with
 * 1 d.o.f. under the model (0 ln 0 = 0, so x = 0 and x = T are defined).
 */
export function kupiecTest(exceptionCount: number, days: number, level: number): LikelihoodRatioTest {
  const fn = 'kupiecTest';
  requireInteger(fn, 'days', days, 1);
  requireInteger(fn, 'exceptionCount', exceptionCount, 0);
  if (exceptionCount > days) throw new Error(`${fn}: exceptionCount ${exceptionCount} exceeds days ${days}`);
  requireOpenUnit(fn, 'level', level);
  const p = 1 - level;
  const x = exceptionCount;
  const observed = x / days;
  const lr = -2 * (xLogY(days - x, 1 - p) + xLogY(x, p)) + 2 * (xLogY(days - x, 1 - observed) + xLogY(x, observed));
  return withPValue(lr, 1);
}

export interface TransitionCounts {
  /** n_ab: days with state b that follow a day with state a (0 = no exception, 1 = exception). */
  n00: number;
  n01: number;
  n10: number;
  n11: number;
}

/** Counts of consecutive pairs in an exception sequence (length - 1 pairs). */
export function transitionCounts(sequence: Uint8Array): TransitionCounts {
  const counts = { n00: 0, n01: 0, n10: 0, n11: 0 };
  for (let t = 1; t < sequence.length; t++) {
    const from = sequence[t - 1];
    const to = sequence[t];
    if ((from !== 0 && from !== 1) || (to !== 0 && to !== 1)) {
      throw new Error(`transitionCounts: sequence must hold 0 and 1 only, got ${from === 0 || from === 1 ? to : from}`);
    }
    if (from === 0) counts[to === 0 ? 'n00' : 'n01']++;
    else counts[to === 0 ? 'n10' : 'n11']++;
  }
  return counts;
}

/**
 * Christoffersen's independence test (P. F. Christoffersen, "Evaluating interval
 * forecasts", International Economic Review 39(4), 1998): does an exception make the next
 * one likelier? With pi01 = n01/(n00 + n01), pi11 = n11/(n10 + n11),
 * pi = (n01 + n11)/(n00 + n01 + n10 + n11):
 * LR_ind = -2 ln[(1 - pi)^(n00 + n10) pi^(n01 + n11)]
 *          + 2 ln[(1 - pi01)^n00 pi01^n01 (1 - pi11)^n10 pi11^n11], chi-squared, 1 d.o.f.
 * A sequence without exceptions (or of nothing else) gives LR 0, p 1: no evidence.
 */
export function christoffersenIndependence(sequence: Uint8Array): LikelihoodRatioTest {
  requireInteger('christoffersenIndependence', 'sequence.length', sequence.length, 2);
  return independenceFromCounts(transitionCounts(sequence));
}

/** The independence test from the transition counts of a sequence of at least 2 days. */
function independenceFromCounts({ n00, n01, n10, n11 }: TransitionCounts): LikelihoodRatioTest {
  const pi01 = n01 / (n00 + n01 || 1);
  const pi11 = n11 / (n10 + n11 || 1);
  const pi = (n01 + n11) / (n00 + n01 + n10 + n11);
  const restricted = xLogY(n00 + n10, 1 - pi) + xLogY(n01 + n11, pi);
  const unrestricted = xLogY(n00, 1 - pi01) + xLogY(n01, pi01) + xLogY(n10, 1 - pi11) + xLogY(n11, pi11);
  return withPValue(-2 * restricted + 2 * unrestricted, 1);
}

/**
 * Christoffersen's conditional coverage test (same paper): LR_cc = LR_pof + LR_ind,
 * chi-squared with 2 d.o.f., a joint test of the rate and the independence of exceptions.
 * Both parts use the whole sequence (common practice; the paper conditions on the first day).
 */
export function christoffersenConditionalCoverage(sequence: Uint8Array, level: number): LikelihoodRatioTest {
  let count = 0;
  for (let t = 0; t < sequence.length; t++) count += sequence[t];
  const pof = kupiecTest(count, sequence.length, level);
  const independence = christoffersenIndependence(sequence);
  return withPValue(pof.lr + independence.lr, 2);
}

export type BaselZone = 'green' | 'yellow' | 'red';

/** The observation count the Basel zones are defined for. */
export const BASEL_OBSERVATIONS = 250;

/**
 * The traffic-light zone of a 99% VaR model from its exceptions in the last 250 days:
 * green 0-4, yellow 5-9, red 10 or more (Basel Committee on Banking Supervision,
 * "Supervisory framework for the use of backtesting in conjunction with the internal
 * models approach to market risk capital requirements", January 1996, the table of zones
 * and plus factors). The table is for 250 observations only, so any other count throws.
 */
export function baselZone(exceptionCount: number, observations: number): BaselZone {
  const fn = 'baselZone';
  if (observations !== BASEL_OBSERVATIONS) {
    throw new Error(`${fn}: the zones are defined for ${BASEL_OBSERVATIONS} observations, got ${observations}`);
  }
  requireInteger(fn, 'exceptionCount', exceptionCount, 0);
  if (exceptionCount > observations) throw new Error(`${fn}: exceptionCount ${exceptionCount} exceeds observations ${observations}`);
  if (exceptionCount <= 4) return 'green';
  if (exceptionCount <= 9) return 'yellow';
  return 'red';
}

/** x ln y with 0 ln 0 = 0, the limit that makes x = 0 and x = T well defined. */
function xLogY(x: number, y: number): number {
  return x === 0 ? 0 : x * Math.log(y);
}

/** Rounding can leave a true zero at -1e-16; the statistic is >= 0 by construction. */
function withPValue(lr: number, degreesOfFreedom: 1 | 2): LikelihoodRatioTest {
  const clamped = Math.max(0, lr);
  return { lr: clamped, p: chiSquaredSurvival(clamped, degreesOfFreedom) };
}

export interface BacktestSummary {
  /** Tested days in the window (at most 250). */
  days: number;
  exceptions: number;
  kupiec: LikelihoodRatioTest;
  /** null with fewer than 2 tested days. */
  independence: LikelihoodRatioTest | null;
  /** null until 250 days have been tested: the Basel table holds for 250 only. */
  zone: BaselZone | null;
}

/**
 * The figures of one `var_backtest` row from the exception flags of the tested days up to
 * and including that day (oldest first): the last 250 of them are the window.
 */
export function backtestSummary(flags: Uint8Array, level: number): BacktestSummary {
  requireInteger('backtestSummary', 'flags.length', flags.length, 1);
  const window = new BacktestWindow();
  for (const flag of flags.subarray(Math.max(0, flags.length - BASEL_OBSERVATIONS))) window.push(flag);
  return window.summary(level);
}

/**
 * The last 250 tested days of one VaR series, their exception count and transition
 * counts kept as days are added (a day older than the window leaves it), so each day's
 * summary costs the same however long the series: the counts, and so the figures, are
 * those of `transitionCounts` over the window.
 */
export class BacktestWindow {
  private readonly flags = new Uint8Array(BASEL_OBSERVATIONS);
  private first = 0;
  private days = 0;
  private exceptionCount = 0;
  private readonly counts: TransitionCounts = { n00: 0, n01: 0, n10: 0, n11: 0 };

  /** Adds the next tested day's flag (0 or 1). */
  push(flag: number): void {
    if (flag !== 0 && flag !== 1) throw new Error(`BacktestWindow: a flag must be 0 or 1, got ${flag}`);
    if (this.days === BASEL_OBSERVATIONS) {
      const oldest = this.flags[this.first];
      this.count(oldest, this.flags[(this.first + 1) % BASEL_OBSERVATIONS], -1);
      this.exceptionCount -= oldest;
      this.first = (this.first + 1) % BASEL_OBSERVATIONS;
      this.days--;
    }
    if (this.days > 0) this.count(this.flags[(this.first + this.days - 1) % BASEL_OBSERVATIONS], flag, 1);
    this.flags[(this.first + this.days) % BASEL_OBSERVATIONS] = flag;
    this.days++;
    this.exceptionCount += flag;
  }

  /** The figures of the window as it stands (at least one day pushed). */
  summary(level: number): BacktestSummary {
    requireInteger('BacktestWindow.summary', 'days', this.days, 1);
    return {
      days: this.days,
      exceptions: this.exceptionCount,
      kupiec: kupiecTest(this.exceptionCount, this.days, level),
      independence: this.days >= 2 ? independenceFromCounts(this.counts) : null,
      zone: this.days === BASEL_OBSERVATIONS ? baselZone(this.exceptionCount, BASEL_OBSERVATIONS) : null,
    };
  }

  private count(from: number, to: number, by: 1 | -1): void {
    if (from === 0) this.counts[to === 0 ? 'n00' : 'n01'] += by;
    else this.counts[to === 0 ? 'n10' : 'n11'] += by;
  }
}
