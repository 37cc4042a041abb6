/**
 * Gathers deliveries that land close together into one batch: the batch is released
 * `settleMs` after the last arrival, or `maxWaitMs` after the first one of the batch,
 * whichever comes first (so a steady trickle still gets processed). One business day's
 * prices, positions and fx files then make one run, not two.
 */
export class ArrivalWindow {
  private readonly files: string[] = [];
  private settleTimer: NodeJS.Timeout | null = null;
  private maxTimer: NodeJS.Timeout | null = null;

  constructor(
    private readonly settleMs: number,
    private readonly maxWaitMs: number,
    private readonly release: (files: string[]) => void,
  ) {}

  add(file: string): void {
    if (!this.files.includes(file)) this.files.push(file);
    if (this.settleTimer) clearTimeout(this.settleTimer);
    this.settleTimer = setTimeout(() => this.flush(), this.settleMs);
    this.maxTimer ??= setTimeout(() => this.flush(), this.maxWaitMs);
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
