import type { DateEstimate, EstimatorPlugin } from '../../../src/risk/estimators/estimator.ts';
import { PARALLEL_MIN_COST } from '../../../src/risk/runtime/costModel.ts';

/**
 * A toy estimator in a module of its own, as `registerEstimatorModule` takes one: the
 * module exports `estimator`, and the risk stage's worker threads import it by URL.
 */

/** Daily volatility of every security in the toy estimate, uncorrelated: S = SIGMA^2 I. */
export const SIGMA = 0.01;

/** A covariance that is the same diagonal on every date: every security covered, no state. */
class ConstantDiagonal implements DateEstimate {
  readonly windowDays = 0;
  constructor(readonly startRow: number) {}
  advance(): void {}
  covered(): boolean {
    return true;
  }
  variance(): number {
    return SIGMA * SIGMA;
  }
  product(idx: Int32Array, w: Float64Array, out = new Float64Array(idx.length)): Float64Array {
    for (let a = 0; a < idx.length; a++) out[a] = SIGMA * SIGMA * w[a];
    return out;
  }
  forEachSecurity(): void {}
}

export const estimator: EstimatorPlugin<null> = {
  name: 'constant_diagonal',
  realized: { volatility: false, trackingError: false },
  windows: () => [0],
  // as heavy as the cost model's threshold: with more than one core the run takes worker threads
  plan: () => ({ params: null, cost: PARALLEL_MIN_COST }),
  open: (_params, _windowDays, input) => new ConstantDiagonal(Math.max(0, input.fromRow - 1)),
};
