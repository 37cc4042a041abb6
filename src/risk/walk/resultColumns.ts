/**
 * The risk stage's results as typed-array columns: an estimate's walk over the dates
 * collects its rows here and hands them over in batches, whether it runs on the main
 * thread or in a worker (a batch's buffers are transferred, not copied). Portfolios,
 * dates and securities are integers (p, d, j) as in inputs.ts; statuses are codes
 * into the batch's own list of texts.
 */

import { ensureCapacity } from '../../storage/growable.ts';
import { ACTIVE_VALUES, CONTRIBUTION_VALUES, DAILY_FIGURES, VOL_CHANGE_FIGURES, VOL_CHANGE_SECURITY_VALUES } from './figures.ts';

export interface ResultBatch {
  /** Output dates the walk finished since the previous batch (for progress). */
  dates: number;
  windowDays: number;
  estimator: string;
  statuses: string[];
  daily: {
    rows: number;
    portfolio: Int32Array;
    row: Int32Array;
    /** One column per name of DAILY_FIGURES, NaN = NULL. */
    figures: Float64Array[];
    status: Int32Array;
    nHoldings: Int32Array;
    nCovered: Int32Array;
  };
  /** values: CONTRIBUTION_VALUES columns. */
  contributions: SecurityRows;
  /** values: ACTIVE_VALUES columns. */
  active: SecurityRows;
  securities: { rows: number; row: Int32Array; security: Int32Array; annReturn: Float64Array; annVol: Float64Array };
  /** figures: VOL_CHANGE_FIGURES columns (NaN = NULL); driver: the security with the largest weights part, -1 for none. */
  volChange: { rows: number; portfolio: Int32Array; row: Int32Array; figures: Float64Array[]; status: Int32Array; driver: Int32Array };
  /** values: VOL_CHANGE_SECURITY_VALUES columns. */
  volChangeSecurities: SecurityRows;
  /** Portfolios whose row could not be computed (p, the date row, why): the walk dropped them from then on. */
  failures: PortfolioFailure[];
}

/** Rows keyed by (portfolio, date row, security), one column per value name. */
export interface SecurityRows {
  rows: number;
  portfolio: Int32Array;
  row: Int32Array;
  security: Int32Array;
  values: Float64Array[];
}

export interface PortfolioFailure {
  portfolio: number;
  row: number;
  message: string;
}

/** The buffers a batch owns, for postMessage's transfer list. */
export function batchBuffers(batch: ResultBatch): ArrayBuffer[] {
  const { daily, contributions, active, securities, volChange, volChangeSecurities } = batch;
  const arrays = [
    daily.portfolio,
    daily.row,
    ...daily.figures,
    daily.status,
    daily.nHoldings,
    daily.nCovered,
    ...securityRowArrays(contributions),
    ...securityRowArrays(active),
    securities.row,
    securities.security,
    securities.annReturn,
    securities.annVol,
    volChange.portfolio,
    volChange.row,
    ...volChange.figures,
    volChange.status,
    volChange.driver,
    ...securityRowArrays(volChangeSecurities),
  ];
  return [...new Set(arrays.map((a) => a.buffer as ArrayBuffer))];
}

const securityRowArrays = (part: SecurityRows) => [part.portfolio, part.row, part.security, ...part.values];

type Typed = Int32Array | Float64Array;

/** An append-only column that doubles its buffer as it fills. */
class Column<A extends Typed> {
  values: A;
  length = 0;

  constructor(private readonly make: (n: number) => A) {
    this.values = make(1024);
  }

  push(v: number): void {
    if (this.length === this.values.length) this.values = ensureCapacity(this.values, this.length, this.length + 1, this.make);
    this.values[this.length++] = v;
  }

  /** The values so far (in a buffer of their own); the column starts again empty. */
  take(): A {
    const out = this.values.subarray(0, this.length) as A;
    this.values = this.make(Math.max(1024, this.length));
    this.length = 0;
    return out;
  }
}

const ints = () => new Column((n) => new Int32Array(n));
const doubles = () => new Column((n) => new Float64Array(n));

/** The growing columns of one kind of SecurityRows; callers push the keys, then one value per column. */
class SecurityRowColumns {
  readonly portfolio = ints();
  readonly row = ints();
  readonly security = ints();
  readonly values: Column<Float64Array>[];

  constructor(valueNames: readonly string[]) {
    this.values = Array.from(valueNames, doubles);
  }

  pushKeys(portfolio: number, row: number, security: number): void {
    this.portfolio.push(portfolio);
    this.row.push(row);
    this.security.push(security);
  }

  take(): SecurityRows {
    return { rows: this.row.length, portfolio: this.portfolio.take(), row: this.row.take(), security: this.security.take(), values: this.values.map((v) => v.take()) };
  }
}

/** Collects one estimate's rows; `take()` returns them as a batch. */
export class ResultCollector {
  private readonly statusCodes = new Map<string, number>();
  private readonly daily = {
    portfolio: ints(),
    row: ints(),
    figures: Array.from(DAILY_FIGURES, doubles),
    status: ints(),
    nHoldings: ints(),
    nCovered: ints(),
  };
  private readonly contributions = new SecurityRowColumns(CONTRIBUTION_VALUES);
  private readonly active = new SecurityRowColumns(ACTIVE_VALUES);
  private readonly securities = { row: ints(), security: ints(), annReturn: doubles(), annVol: doubles() };
  private readonly volChange = {
    portfolio: ints(),
    row: ints(),
    figures: Array.from(VOL_CHANGE_FIGURES, doubles),
    status: ints(),
    driver: ints(),
  };
  private readonly volChangeSecurities = new SecurityRowColumns(VOL_CHANGE_SECURITY_VALUES);
  private failures: PortfolioFailure[] = [];
  private dates = 0;

  constructor(
    readonly windowDays: number,
    readonly estimator: string,
  ) {}

  addDaily(portfolio: number, row: number, figures: ArrayLike<number>, status: string, nHoldings: number, nCovered: number): void {
    const d = this.daily;
    d.portfolio.push(portfolio);
    d.row.push(row);
    for (let c = 0; c < DAILY_FIGURES.length; c++) d.figures[c].push(figures[c]);
    d.status.push(this.statusCode(status));
    d.nHoldings.push(nHoldings);
    d.nCovered.push(nCovered);
  }

  addContribution(portfolio: number, row: number, security: number, weight: number, mcr: number, ccr: number, pct: number): void {
    const c = this.contributions;
    c.pushKeys(portfolio, row, security);
    c.values[0].push(weight);
    c.values[1].push(mcr);
    c.values[2].push(ccr);
    c.values[3].push(pct);
  }

  addActiveContribution(portfolio: number, row: number, security: number, values: readonly number[]): void {
    const a = this.active;
    a.pushKeys(portfolio, row, security);
    for (let c = 0; c < ACTIVE_VALUES.length; c++) a.values[c].push(values[c]);
  }

  addSecurity(row: number, security: number, annReturn: number, annVol: number): void {
    const s = this.securities;
    s.row.push(row);
    s.security.push(security);
    s.annReturn.push(annReturn);
    s.annVol.push(annVol);
  }

  /** figures: vol_prev, vol_now, from_weights, from_market, the driver's weights part; driver -1 for none. */
  addVolChange(portfolio: number, row: number, figures: ArrayLike<number>, status: string, driver: number): void {
    const v = this.volChange;
    v.portfolio.push(portfolio);
    v.row.push(row);
    for (let c = 0; c < VOL_CHANGE_FIGURES.length; c++) v.figures[c].push(figures[c]);
    v.status.push(this.statusCode(status));
    v.driver.push(driver);
  }

  addVolChangeSecurity(portfolio: number, row: number, security: number, weightPrev: number, weightNow: number, fromWeights: number): void {
    const v = this.volChangeSecurities;
    v.pushKeys(portfolio, row, security);
    v.values[0].push(weightPrev);
    v.values[1].push(weightNow);
    v.values[2].push(fromWeights);
  }

  addFailure(portfolio: number, row: number, message: string): void {
    this.failures.push({ portfolio, row, message });
  }

  /** One output date done. */
  endDate(): void {
    this.dates++;
  }

  /** Rows held, all tables together: the walk hands a batch over past a size. */
  get pendingRows(): number {
    return (
      this.daily.row.length +
      this.contributions.row.length +
      this.active.row.length +
      this.securities.row.length +
      this.volChange.row.length +
      this.volChangeSecurities.row.length
    );
  }

  private statusCode(status: string): number {
    let code = this.statusCodes.get(status);
    if (code === undefined) {
      code = this.statusCodes.size;
      this.statusCodes.set(status, code);
    }
    return code;
  }

  take(): ResultBatch {
    const { daily: d, contributions: c, active: a, securities: s, volChange: v, volChangeSecurities: vs } = this;
    const batch: ResultBatch = {
      dates: this.dates,
      windowDays: this.windowDays,
      estimator: this.estimator,
      // every code seen so far, so a batch is readable on its own
      statuses: [...this.statusCodes.keys()],
      daily: {
        rows: d.row.length,
        portfolio: d.portfolio.take(),
        row: d.row.take(),
        figures: d.figures.map((f) => f.take()),
        status: d.status.take(),
        nHoldings: d.nHoldings.take(),
        nCovered: d.nCovered.take(),
      },
      contributions: c.take(),
      active: a.take(),
      securities: { rows: s.row.length, row: s.row.take(), security: s.security.take(), annReturn: s.annReturn.take(), annVol: s.annVol.take() },
      volChange: {
        rows: v.row.length,
        portfolio: v.portfolio.take(),
        row: v.row.take(),
        figures: v.figures.map((f) => f.take()),
        status: v.status.take(),
        driver: v.driver.take(),
      },
      volChangeSecurities: vs.take(),
      failures: this.failures,
    };
    this.failures = [];
    this.dates = 0;
    return batch;
  }
}
