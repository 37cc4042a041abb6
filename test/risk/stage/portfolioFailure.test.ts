import { describe, expect, it } from 'vitest';
import type { ConfigInput } from '../../../src/config/schema.ts';
import { resolveConfig } from '../../../src/config/load.ts';
import { computeRisk, type ComputeInputs } from '../../../src/risk/runtime/computeRisk.ts';
import type { PortfolioFailure, ResultBatch } from '../../../src/risk/walk/resultColumns.ts';
import { createRandom } from '../../../src/demo/random.ts';
import { memoryLogger } from '../../../src/log/logger.ts';
import { randomReturnPanel } from '../../helpers/returnPanel.ts';

const quiet = { advance: () => undefined, finish: () => undefined };
const T = 120;
const IDS = ['acct-alder', 'acct-birch', 'acct-cedar'];

/** Three invented portfolios on the same five securities, equal weights, every day. */
function inputs(birchValue: (d: number) => number): ComputeInputs {
  const random = createRandom(7);
  const returns = randomReturnPanel(random, T, 5, { drift: 0, loading: () => 1, missing: (d) => d === 0, securityId: (j) => `EQ-FIVE-${j}` });
  const slots = IDS.length * T;
  return {
    returns,
    portfolios: {
      ids: IDS,
      firstRow: 0,
      present: new Uint8Array(slots).fill(1),
      value: Float64Array.from({ length: slots }, (_, s) => (Math.floor(s / T) === 1 ? birchValue(s % T) : 1e6)),
      unpriced: new Uint8Array(slots),
      stale: new Uint8Array(slots),
      logReturn: Float64Array.from({ length: slots }, (_, s) => (s % T === 0 ? Number.NaN : 0.01 * Math.sin(s))),
      offsets: Int32Array.from({ length: slots + 1 }, (_, s) => 5 * s),
      security: Int32Array.from({ length: 5 * slots }, (_, h) => h % 5),
      weight: new Float64Array(5 * slots).fill(0.2),
    },
    // no benchmark: tracking error is not what this test is about
    benchmarks: { ids: [], ofPortfolio: new Int32Array(IDS.length).fill(-1), logReturn: new Float64Array(0), offsets: new Int32Array(1), security: new Int32Array(0), weight: new Float64Array(0) },
    fromRow: 0,
    states: {},
  };
}

const config = resolveConfig({ risk: { windows: [21, 63], tradingDaysPerYear: 252 } } satisfies ConfigInput, '/tmp/pipeline.config.json');

async function run(input: ComputeInputs, threads: number) {
  const batches: ResultBatch[] = [];
  await computeRisk(input, config, (b) => batches.push(b), quiet, memoryLogger().log, { threads });
  const failures: PortfolioFailure[] = batches.flatMap((b) => b.failures);
  const daily = new Map<string, number>();
  for (const b of batches) {
    for (let i = 0; i < b.daily.rows; i++) daily.set(`${b.estimator}|${b.windowDays}|${b.daily.portfolio[i]}|${b.daily.row[i]}`, b.daily.figures[1][i]);
  }
  return { failures, daily };
}

describe('a portfolio whose figures come out infinite', () => {
  it('is reported once per estimate from the date it fails, and the walk goes on for the others with the same figures', async () => {
    // an overflowing value from day 90 on: what a quantity of 1e307 at any price gives
    const bad = await run(inputs((d) => (d >= 90 ? Number.POSITIVE_INFINITY : 1e6)), 1);
    const good = await run(inputs(() => 1e6), 1);
    expect(bad.failures.map((f) => [f.portfolio, f.row, f.message]).sort()).toEqual([
      [1, 90, '21-day sample estimate: portfolio_value (Infinity) is not finite'],
      [1, 90, '63-day sample estimate: portfolio_value (Infinity) is not finite'],
      [1, 90, 'ewma estimate: portfolio_value (Infinity) is not finite'],
    ]);
    expect(good.failures).toEqual([]);
    expect(good.daily.size).toBe(3 * IDS.length * T); // two windows and the EWMA, every portfolio, every date
    for (const [key, vol] of good.daily) {
      const [, , p, d] = key.split('|').map(Number);
      if (p === 1 && d >= 90) expect(bad.daily.has(key)).toBe(false);
      else expect(bad.daily.get(key)).toBe(vol);
    }
  });

  it('gives the same failures when the estimates run in worker threads', async () => {
    const input = inputs((d) => (d >= 90 ? Number.POSITIVE_INFINITY : 1e6));
    const inline = await run(input, 1);
    const threaded = await run(input, 2);
    const key = (fs: PortfolioFailure[]) => fs.map((f) => `${f.portfolio}|${f.row}|${f.message}`).sort();
    expect(key(threaded.failures)).toEqual(key(inline.failures));
    expect(threaded.daily).toEqual(inline.daily);
  });
});
