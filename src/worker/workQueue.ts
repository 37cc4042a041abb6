/**
 * The worker's single lane to its database. Files wait in arrival order; whenever the lane
 * is free, all waiting files go as ONE batch (so files that arrive while a batch runs form
 * the next one). Other work that must not overlap a batch (scheduled jobs, publishing the
 * read copy) is queued with `exclusive()` and runs between batches; files go first.
 */
export class WorkQueue {
  private readonly pending: string[] = [];
  private readonly jobs: { run: () => Promise<unknown>; settle: (err: unknown, value?: unknown) => void }[] = [];
  private active: Promise<void> | null = null;
  private firstBatch: string[] | null = null;
  private started = false;
  private stopped = false;

  /** `runBatch` handles its own failures: a rejection here would stop the lane. */
  constructor(private readonly runBatch: (files: string[]) => Promise<void>) {}

  /** Queues deliveries unless already waiting (a file can be both listed at start and announced); together they make one batch. */
  addFiles(files: readonly string[]): void {
    if (this.stopped) return;
    for (const file of files) if (!this.pending.includes(file)) this.pending.push(file);
    this.kick();
  }

  exclusive<T>(run: () => Promise<T>): Promise<T> {
    if (this.stopped) return Promise.reject(new Error('the worker is stopping'));
    return new Promise<T>((resolve, reject) => {
      this.jobs.push({ run, settle: (err, value) => (err === undefined ? resolve(value as T) : reject(err)) });
      this.kick();
    });
  }

  /**
   * Opens the lane with the catch-up batch (the files found at start, run even when empty),
   * ahead of anything announced meanwhile. Nothing runs before start().
   */
  start(catchUp: string[]): void {
    this.started = true;
    this.firstBatch = catchUp;
    this.kick();
  }

  /** Files waiting, not yet in a batch. */
  get waiting(): number {
    return this.pending.length;
  }

  /** Lets the running batch or job finish; waiting files stay in the inbox for the next start. */
  async stop(): Promise<void> {
    this.stopped = true;
    for (const job of this.jobs.splice(0)) job.settle(new Error('the worker is stopping'));
    await this.active;
  }

  /** Resolves when nothing runs and nothing waits (tests, the final publish). */
  async idle(): Promise<void> {
    while (this.active) await this.active;
  }

  private kick(): void {
    if (!this.started || this.active) return;
    this.active = this.drain().finally(() => {
      this.active = null;
      // work queued from a microtask between the drain's last check and here
      if (!this.stopped && (this.pending.length > 0 || this.jobs.length > 0)) this.kick();
    });
  }

  private async drain(): Promise<void> {
    while (!this.stopped) {
      if (this.firstBatch) {
        const batch = this.firstBatch;
        this.firstBatch = null;
        this.pending.splice(0, this.pending.length, ...this.pending.filter((f) => !batch.includes(f)));
        await this.runBatch(batch);
      } else if (this.pending.length > 0) {
        await this.runBatch(this.pending.splice(0));
      } else if (this.jobs.length > 0) {
        const job = this.jobs.shift()!;
        try {
          job.settle(undefined, await job.run());
        } catch (err) {
          job.settle(err ?? new Error('job failed'));
        }
      } else {
        return;
      }
    }
  }
}
