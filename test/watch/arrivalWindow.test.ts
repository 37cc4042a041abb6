import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { ArrivalWindow } from '../../src/watch/arrivalWindow.ts';

describe('ArrivalWindow', () => {
  beforeEach(() => vi.useFakeTimers());
  afterEach(() => vi.useRealTimers());

  it('releases files landing within the settle window as one batch, settleMs after the last arrival', () => {
    const batches: string[][] = [];
    const w = new ArrivalWindow(2000, 30_000, (files) => batches.push(files));
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
    const w = new ArrivalWindow(1000, 3000, (files) => batches.push(files));
    for (let i = 0; i < 5; i++) {
      w.add(`/in/prices_${i}.csv`);
      vi.advanceTimersByTime(800);
    }
    // arrivals at 0, 800, 1600, 2400 went out at 3000; the one at 3200 waits for its own window
    expect(batches).toEqual([['/in/prices_0.csv', '/in/prices_1.csv', '/in/prices_2.csv', '/in/prices_3.csv']]);
    vi.advanceTimersByTime(1000);
    expect(batches).toEqual([['/in/prices_0.csv', '/in/prices_1.csv', '/in/prices_2.csv', '/in/prices_3.csv'], ['/in/prices_4.csv']]);
  });

  it('releases nothing after close()', () => {
    const batches: string[][] = [];
    const w = new ArrivalWindow(1000, 3000, (files) => batches.push(files));
    w.add('/in/prices.csv');
    w.close();
    vi.advanceTimersByTime(5000);
    expect(batches).toEqual([]);
  });
});
