import type { Logger } from 'pino';
import type { Config } from '../../config/load.ts';
import type { Database } from '../../storage/database.ts';
import type { ReturnPanel } from '../inputs/panels.ts';
import type { ComputeInputs } from '../walk/walkEstimate.ts';
import type { CovarianceView } from '../walk/portfolioRow.ts';
import type { RunLoad } from '../runtime/costModel.ts';

/**
 * What an estimator plug-in declares. One module per estimator (estimators/<name>.ts),
 * registered by one line in registry.ts; the walk, the runtime and the writers read
 * everything they need from here and never test an estimator's name.
 */
export interface EstimatorPlugin<Params = unknown, State = unknown> {
  /** risk_daily.estimator of its rows. */
  readonly name: string;
  /**
   * The realized figures its rows carry, from the portfolio's own returns over the
   * window: vol_realized and ann_return (volatility), tracking_error_realized.
   */
  readonly realized: { readonly volatility: boolean; readonly trackingError: boolean };
  /** Its state kept between runs (a recursive estimate), if any. */
  readonly storedState?: StoredState<State>;
  /** window_days of each estimate it makes in a run (0: not windowed); none when switched off. */
  windows(config: Config): number[];
  /** One estimate's parameters and its cost in multiply-adds for the cost model (rows beyond the product aside). */
  plan(windowDays: number, config: Config, run: RunLoad, state: State | null, log: Logger): { params: Params; cost: number };
  /** The estimate, standing before its `startRow`; `state` is the stored one at fromRow - 1, if any. */
  open(params: Params, windowDays: number, input: ComputeInputs, state: State | null): DateEstimate<State>;
}

/** An estimate walked over the dates once, in increasing order from `startRow`. */
export interface DateEstimate<State = unknown> extends CovarianceView {
  readonly windowDays: number;
  readonly startRow: number;
  /** Moves to date row d; `output` also prepares what an output date reads (per-security figures). */
  advance(d: number, output: boolean): void;
  /** security_stats of the current date (none: left to another estimate of the same window). */
  forEachSecurity(emit: (j: number, annReturn: number, annVol: number) => void, periodsPerYear: number): void;
  /** A per-row figure of its own, shrinkage_intensity: that of its last product (NaN for none), forgotten once taken. */
  takeIntensity?(): number;
  /** After the walk: the states to store, oldest first. */
  finish?(): State[];
}

/** Loading and saving an estimator's state; `settings` is the JSON the run's results are made with. */
export interface StoredState<State> {
  load(db: Database, config: Config, dates: readonly string[], fromRow: number, settings: string): Promise<State | null>;
  /**
   * Whether the loaded state can be continued over these returns (absent: always); a state
   * that cannot is dropped and the estimate replays from the first date, with the returns
   * of every date read.
   */
  fits?(state: State, returns: ReturnPanel, config: Config): boolean;
  /** Inside the run's write transaction: replace the stored states with `states`. */
  save(db: Database, config: Config, dates: readonly string[], states: readonly State[], runId: number, settings: string): Promise<void>;
}

/** States to store after a run, by estimator name (only estimators that keep one and ran). */
export type EstimatorStates = Record<string, unknown[]>;

/** Adds an estimate's states to the run's (an estimator that keeps none adds nothing). */
export function keepStates(states: EstimatorStates, estimator: string, kept: unknown[]): void {
  if (kept.length > 0) states[estimator] = kept;
}
