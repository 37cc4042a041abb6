/** Wall-clock seconds per named phase, so a slow run's log line says where the time went. */
export interface PhaseClock {
  /** Seconds per phase, in the order the phases first ran. */
  readonly seconds: Record<string, number>;
  /** Adds the time since `startedAt` (a performance.now() reading) to `name`. */
  add(name: string, startedAt: number): void;
  time<T>(name: string, fn: () => Promise<T>): Promise<T>;
}

export function phaseClock(): PhaseClock {
  const seconds: Record<string, number> = {};
  const add = (name: string, startedAt: number) => {
    seconds[name] = (seconds[name] ?? 0) + (performance.now() - startedAt) / 1000;
  };
  return {
    seconds,
    add,
    async time<T>(name: string, fn: () => Promise<T>): Promise<T> {
      const startedAt = performance.now();
      try {
        return await fn();
      } finally {
        add(name, startedAt);
      }
    },
  };
}
