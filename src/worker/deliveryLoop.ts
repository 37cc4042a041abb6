import type { Logger } from 'pino';
import type { DeliverySummary } from '../alerts/deliverAlerts.ts';

/**
 * Runs alert delivery beside the worker's queue (deliverAlerts uses its own session), so the
 * network never holds up the next file. Kicks while a round runs fold into one more
 * round. After a round that changed the outbox, `onChange` republishes the read copy.
 * After every round a timer is set to the earliest due retry, so an alert is retried
 * when its backoff runs out, not at the next periodic job.
 */
export class DeliveryLoop {
  private running: Promise<void> | null = null;
  private again = false;
  private stopped = false;
  private timer: NodeJS.Timeout | null = null;

  constructor(
    private readonly deliver: () => Promise<DeliverySummary>,
    private readonly onChange: () => void,
    private readonly log: Logger,
  ) {}

  kick(): void {
    if (this.stopped) return;
    if (this.running) {
      this.again = true;
      return;
    }
    this.running = this.rounds().finally(() => {
      this.running = null;
    });
  }

  /** Waits for the round in flight (its channels have their own timeouts), then stops. */
  async stop(): Promise<void> {
    this.stopped = true;
    this.disarm();
    await this.running;
  }

  private async rounds(): Promise<void> {
    do {
      this.again = false;
      try {
        const summary = await this.deliver();
        if (summary.delivered > 0 || summary.failed > 0) this.onChange();
        this.arm(summary.nextAttemptAt);
      } catch (err) {
        // deliverAlerts reports a failed channel in its summary; this is a fault of the machine
        this.log.error({ stage: 'alerts', err }, 'alert delivery round failed');
      }
    } while (this.again && !this.stopped);
  }

  /** One timer at a time, for the earliest due retry; an earlier kick does no harm. */
  private arm(nextAttemptAt: string | null): void {
    this.disarm();
    if (nextAttemptAt === null || this.stopped) return;
    // a due time in the past (clock skew) still waits a little, so a failing endpoint is not hammered
    const wait = Math.max(Date.parse(nextAttemptAt) - Date.now(), MIN_WAIT_MS);
    this.timer = setTimeout(() => {
      this.timer = null;
      this.kick();
    }, Math.min(wait, MAX_TIMER_MS));
    this.timer.unref();
  }

  private disarm(): void {
    if (this.timer !== null) clearTimeout(this.timer);
    this.timer = null;
  }
}

const MIN_WAIT_MS = 50;
/** setTimeout holds at most 2^31 - 1 ms; a longer wait is re-armed by the round it triggers. */
const MAX_TIMER_MS = 2 ** 31 - 1;
