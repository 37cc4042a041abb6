import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { ArrivalWindow, type ArrivalTiming } from '../../src/watch/arrivalWindow.ts';

/** A whole day here: a prices and a positions file, whatever else. */
const wholeDay = (files: readonly string[]) => ['prices', 'positions'].every((kind) => files.some((f) => f.includes(kind)));
const never = () => false;

function windowOf(timing: Partial<ArrivalTiming>, isWholeDay: (files: readonly string[]) => boolean, batches: string[][]): ArrivalWindow {
  return new ArrivalWindow({ settleMs: 1000, maxWaitMs: 3000, wholeDayMs: 300, ...timing }, isWholeDay, (files) => batches.push(files));
}

describe('ArrivalWindow', () => {
  beforeEach(() => vi.useFakeTimers());
  afterEach(() => vi.useRealTimers());

  it('releases files landing within the settle window as one batch, settleMs after the last arrival', () => {
    const batches: string[][] = [];
    const w = windowOf({ settleMs: 2000, maxWaitMs: 30_000 }, never, batches);
    w.add('/in/securities.csv');
    vi.advanceTimersByTime(1500);
    w.add('/in/fx.csv');
    vi.advanceTimersByTime(1500);
    w.add('/in/prices.csv');
    w.add('/in/prices.csv'); // announced twice (add, then change): once in the batch
    vi.advanceTimersByTime(1999);
    expect(batches).toEqual([]);
    vi.advanceTimersByTime(1);
    expect(batches).toEqual([['/in/securities.csv', '/in/fx.csv', '/in/prices.csv']]);
  });

  it('releases a steady trickle at maxWaitMs after its first arrival, then starts a new window', () => {
    const batches: string[][] = [];
    const w = windowOf({}, never, batches);
    for (let i = 0; i < 5; i++) {
      w.add(`/in/prices_${i}.csv`);
      vi.advanceTimersByTime(800);
    }
    // arrivals at 0, 800, 1600, 2400 went out at 3000; the one at 3200 waits for its own window
    expect(batches).toEqual([['/in/prices_0.csv', '/in/prices_1.csv', '/in/prices_2.csv', '/in/prices_3.csv']]);
    vi.advanceTimersByTime(1000);
    expect(batches).toEqual([['/in/prices_0.csv', '/in/prices_1.csv', '/in/prices_2.csv', '/in/prices_3.csv'], ['/in/prices_4.csv']]);
  });

  it('releases a whole day wholeDayMs after its last arrival, a straggler within that time included', () => {
    const batches: string[][] = [];
    const w = windowOf({ settleMs: 2000, maxWaitMs: 30_000 }, wholeDay, batches);
    w.add('/in/positions.csv');
    vi.advanceTimersByTime(1500);
    // not whole yet: still waiting out the settle window
    expect(batches).toEqual([]);
    w.add('/in/prices.csv');
    vi.advanceTimersByTime(200);
    w.add('/in/fx.csv');
    vi.advanceTimersByTime(299);
    expect(batches).toEqual([]);
    vi.advanceTimersByTime(1);
    expect(batches).toEqual([['/in/positions.csv', '/in/prices.csv', '/in/fx.csv']]);
  });

  it('never waits longer for a whole day than for any other batch (wholeDayMs above settleMs counts as settleMs)', () => {
    const batches: string[][] = [];
    const w = windowOf({ settleMs: 500, wholeDayMs: 5000 }, wholeDay, batches);
    w.add('/in/prices.csv');
    w.add('/in/positions.csv');
    vi.advanceTimersByTime(500);
    expect(batches).toEqual([['/in/prices.csv', '/in/positions.csv']]);
  });

  it('releases nothing after close()', () => {
    const batches: string[][] = [];
    const w = windowOf({}, wholeDay, batches);
    w.add('/in/prices.csv');
    w.add('/in/positions.csv');
    w.close();
    vi.advanceTimersByTime(5000);
    expect(batches).toEqual([]);
  });
});
