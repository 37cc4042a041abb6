import type { NewAlert } from '../alerts/outbox.ts';

export interface SuspectPriceFacts {
  checkId: number;
  securityId: string;
  date: string;
  price: number;
  reason: string;
  /** Left out of risk (mode hold) rather than used and flagged. */
  held: boolean;
}

/**
 * The price_suspect alert: once when a price is flagged (`cleared` null), once when the
 * flag clears (repeated, corrected). Its id names the flag, so each is sent once.
 */
export function priceSuspectAlert(f: SuspectPriceFacts, cleared: string | null): NewAlert {
  const use = f.held ? 'held out of risk: the previous price is carried forward as stale' : 'used in risk and flagged';
  const text =
    cleared === null
      ? `${f.securityId}: price ${f.price} on ${f.date} is suspect (${f.reason}); ${use} until a later delivery repeats or corrects it`
      : `${f.securityId}: the suspect price ${f.price} on ${f.date} is cleared: ${cleared}`;
  return {
    alertId: `price-suspect-${f.checkId}-${cleared === null ? 'flagged' : 'cleared'}`,
    kind: 'price_suspect',
    portfolioId: null,
    asOf: f.date,
    payload: {
      level: cleared === null ? 'suspect' : 'cleared',
      episode_state: cleared === null ? 'open' : 'closed',
      security_id: f.securityId,
      date: f.date,
      price: f.price,
      reason: f.reason,
      held: f.held,
      cleared_reason: cleared,
      text,
    },
  };
}
