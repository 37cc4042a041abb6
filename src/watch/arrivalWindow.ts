/**
 * Gathers deliveries that land close together into one batch: the batch is released
 * `settleMs` after the last arrival, or `maxWaitMs` after the first one of the batch,
 * whichever comes first (so a steady trickle still gets processed). One business day's
 * prices, positions and fx files then make one run, not two.
 *
 * A batch that already holds a whole day (`isWholeDay`, e.g. a file of every kind the
 * day needs) waits only `wholeDayMs` after its last arrival: its files were announced
 * together, so a few polls of the watcher are enough to catch a straggler of the same
 * delivery, and the run need not wait out the full window.
 */
export interface ArrivalTiming {
  settleMs: number;
  maxWaitMs: number;
  /** The quiet time after the last arrival once the batch holds a whole day; at most settleMs counts. */
  wholeDayMs: number;
}

export class ArrivalWindow {
  private readonly files: string[] = [];
  private settleTimer: NodeJS.Timeout | null = null;
  private maxTimer: NodeJS.Timeout | null = null;

  constructor(
    private readonly timing: ArrivalTiming,
    private readonly isWholeDay: (files: readonly string[]) => boolean,
    private readonly release: (files: string[]) => void,
  ) {}

  add(file: string): void {
    if (!this.files.includes(file)) this.files.push(file);
    if (this.settleTimer) clearTimeout(this.settleTimer);
    const { settleMs, maxWaitMs, wholeDayMs } = this.timing;
    const quiet = this.isWholeDay(this.files) ? Math.min(wholeDayMs, settleMs) : settleMs;
    this.settleTimer = setTimeout(() => this.flush(), quiet);
    this.maxTimer ??= setTimeout(() => this.flush(), maxWaitMs);
  }

  /** Drops the timers; files not yet released stay in the inbox for the next start. */
  close(): void {
    this.clearTimers();
    this.files.length = 0;
  }

  private flush(): void {
    this.clearTimers();
    if (this.files.length > 0) this.release(this.files.splice(0));
  }

  private clearTimers(): void {
    if (this.settleTimer) clearTimeout(this.settleTimer);
    if (this.maxTimer) clearTimeout(this.maxTimer);
    this.settleTimer = null;
    this.maxTimer = null;
  }
}
