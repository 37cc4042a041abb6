/**
 * Suspect prices, pure: plain functions over one security's price series (no database,
 * no clock). A price is suspect when, against the last price that was not suspect:
 *
 * - jump: its log move is beyond `sigmaMultiple` times the security's EWMA daily sigma
 *   AND beyond `minLogMove` (both, so a quiet security's ordinary 3% day and a volatile
 *   one's ordinary 20% day both pass);
 * - power_of_ten: the move is a factor close to 10, 100, 0.1, ... (a unit or a decimal
 *   separator slip), whatever the volatility;
 * - unchanged: the price has not moved for `unchangedDates` valuation dates in a row
 *   while other securities of its market (same currency) moved on most of them.
 *
 * The EWMA variance is the RiskMetrics recursion s2_t = lambda s2_(t-1) + (1 - lambda) r_t^2
 * (J.P. Morgan/Reuters, RiskMetrics Technical Document, 1996), seeded with the mean square
 * of the first `seedReturns` accepted returns; a suspect price's return never enters it,
 * so one slip cannot widen the band that should catch the next.
 */

export interface SuspectPriceRules {
  sigmaMultiple: number;
  minLogMove: number;
  lambda: number;
  seedReturns: number;
  /** Largest distance, in log10 units, of a move from a whole power of ten to count as one. */
  powerOfTenTolerance: number;
  unchangedDates: number;
}

export interface PricePoint {
  /** 'YYYY-MM-DD', ascending. */
  date: string;
  price: number;
  /** Delivered twice with this value (a repeat confirms it): never suspect. */
  confirmed: boolean;
  /** Other securities of its market moved on this date. */
  marketMoved: boolean;
}

export type SuspectRule = 'jump' | 'power_of_ten' | 'unchanged';

export interface SuspectPrice {
  index: number;
  date: string;
  rules: SuspectRule[];
  /** Plain words for check_data_quality and the alert. */
  reason: string;
}

/** The suspect prices of one security's series, in date order. */
export function findSuspectPrices(points: readonly PricePoint[], rules: SuspectPriceRules): SuspectPrice[] {
  checkRules(rules);
  const out: SuspectPrice[] = [];
  let reference = -1; // index of the last price that was not suspect
  let variance = Number.NaN;
  let seedSum = 0;
  let seedCount = 0;
  let unchangedRun = 0;
  let movedInRun = 0;
  for (let i = 0; i < points.length; i++) {
    const { date, price, confirmed, marketMoved } = points[i];
    if (!(price > 0) || !Number.isFinite(price)) throw new Error(`findSuspectPrices: price on ${date} must be a positive number, got ${price}`);
    if (i > 0 && date <= points[i - 1].date) throw new Error(`findSuspectPrices: dates must ascend: ${date} after ${points[i - 1].date}`);
    if (reference < 0) {
      reference = i;
      continue;
    }
    const sigma = Math.sqrt(variance);
    // a new level that the next price holds is taken as real from that next price on
    // (the first price at it stays flagged until a repeat delivery confirms it)
    const previous = out.length > 0 ? out[out.length - 1] : null;
    if (previous?.index === i - 1 && previous.rules.some((r) => r !== 'unchanged')) {
      const fromSuspect = Math.log(price / points[i - 1].price);
      if (!isJump(fromSuspect, sigma, rules) && powerOfTen(fromSuspect, rules) === 0) reference = i - 1;
    }
    const move = Math.log(price / points[reference].price);
    const found: SuspectRule[] = [];
    const words: string[] = [];
    if (isJump(move, sigma, rules)) {
      found.push('jump');
      const band = Number.isFinite(sigma) ? `, ${(Math.abs(move) / sigma).toFixed(1)} times its EWMA daily sigma of ${pct(sigma)}` : '';
      words.push(`log move ${move.toFixed(3)} from ${fmt(points[reference].price)} on ${points[reference].date}${band}`);
    }
    const nearest = powerOfTen(move, rules);
    if (nearest !== 0) {
      found.push('power_of_ten');
      words.push(`a factor of ${fmt(Math.exp(move))}, close to ${fmt(10 ** nearest)}: a unit or decimal-separator slip?`);
    }
    // a run of unchanged prices counts from the price it repeats
    if (price === points[i - 1].price) {
      unchangedRun++;
      if (marketMoved) movedInRun++;
    } else {
      unchangedRun = 0;
      movedInRun = 0;
    }
    if (unchangedRun >= rules.unchangedDates && movedInRun * 2 > unchangedRun) {
      found.push('unchanged');
      words.push(`unchanged at ${fmt(price)} for ${unchangedRun} valuation dates while its market moved on ${movedInRun} of them`);
    }
    if (found.length > 0 && !confirmed) {
      out.push({ index: i, date, rules: found, reason: words.join('; ') });
      continue;
    }
    // an accepted price: its return feeds the EWMA and it becomes the reference
    if (seedCount < rules.seedReturns) {
      seedSum += move * move;
      seedCount++;
      if (seedCount === rules.seedReturns) variance = seedSum / seedCount;
    } else {
      variance = rules.lambda * variance + (1 - rules.lambda) * move * move;
    }
    reference = i;
  }
  return out;
}

/**
 * Per date, how many securities of each market (currency) moved: the input of the
 * unchanged rule. `series` holds each security's dates and prices in date order.
 */
export function marketMoves(series: readonly { currency: string; dates: readonly string[]; prices: readonly number[] }[]): Map<string, Map<string, number>> {
  const moves = new Map<string, Map<string, number>>();
  for (const { currency, dates, prices } of series) {
    let byDate = moves.get(currency);
    if (!byDate) moves.set(currency, (byDate = new Map()));
    for (let i = 1; i < prices.length; i++) {
      if (prices[i] !== prices[i - 1]) byDate.set(dates[i], (byDate.get(dates[i]) ?? 0) + 1);
    }
  }
  return moves;
}

/** Beyond the floor and beyond k sigma (only the floor while sigma is not seeded yet). */
function isJump(move: number, sigma: number, rules: SuspectPriceRules): boolean {
  return Math.abs(move) > rules.minLogMove && (!Number.isFinite(sigma) || Math.abs(move) > rules.sigmaMultiple * sigma);
}

/** n when the move is a factor within tolerance of 10^n (n != 0), else 0. */
function powerOfTen(move: number, rules: SuspectPriceRules): number {
  const decades = move / Math.LN10;
  const nearest = Math.round(decades);
  return nearest !== 0 && Math.abs(decades - nearest) <= rules.powerOfTenTolerance ? nearest : 0;
}

function checkRules(r: SuspectPriceRules): void {
  if (!(r.sigmaMultiple > 0 && r.minLogMove > 0)) throw new Error('findSuspectPrices: sigmaMultiple and minLogMove must be positive');
  if (!(r.lambda > 0 && r.lambda < 1)) throw new Error(`findSuspectPrices: lambda must be in (0, 1), got ${r.lambda}`);
  if (!(Number.isInteger(r.seedReturns) && r.seedReturns >= 1)) throw new Error('findSuspectPrices: seedReturns must be a whole number >= 1');
  if (!(r.powerOfTenTolerance >= 0 && r.powerOfTenTolerance < 0.5)) throw new Error('findSuspectPrices: powerOfTenTolerance must be in [0, 0.5)');
  if (!(Number.isInteger(r.unchangedDates) && r.unchangedDates >= 2)) throw new Error('findSuspectPrices: unchangedDates must be a whole number >= 2');
}

const pct = (x: number) => `${(x * 100).toFixed(2)}%`;
const fmt = (x: number) => String(Number(x.toPrecision(6)));
