import type { Logger } from 'pino';
import type { DeliverySummary } from '../alerts/deliverAlerts.ts';

/**
 * Runs alert delivery beside the worker's queue (deliverAlerts uses its own session), so the
 * network never holds up the next file. Kicks while a round runs fold into one more
 * round. After a round that changed the outbox, `onChange` republishes the read copy.
 */
export class DeliveryLoop {
  private running: Promise<void> | null = null;
  private again = false;
  private stopped = false;

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
    await this.running;
  }

  private async rounds(): Promise<void> {
    do {
      this.again = false;
      try {
        const summary = await this.deliver();
        if (summary.delivered > 0 || summary.failed > 0) this.onChange();
      } catch (err) {
        // deliverAlerts reports a failed channel in its summary; this is a fault of the machine
        this.log.error({ stage: 'alerts', err }, 'alert delivery round failed');
      }
    } while (this.again && !this.stopped);
  }
}
