import { businessDays } from '../../src/demo/market.ts';
import { createRandom } from '../../src/demo/random.ts';
import type { Deliveries, PriceRow } from '../helpers/rawRows.ts';

/**
 * A random but reproducible scenario of raw deliveries (invented ids), with holidays,
 * corrections, superseded snapshots, foreign currencies, fx gaps and cash.
 */

// securities: [id, currency in the securities table, currency on the price rows, chance of a price on a weekday]
const UNIVERSE: [string, string | null, string | null, number][] = [
  ['EQ-ALDER', 'USD', null, 0.9],
  ['EQ-BIRCH', 'EUR', null, 0.85],
  ['EQ-CEDAR', null, 'GBP', 0.85],
  ['BD-DUNE-30', null, null, 0.9],
  ['EQ-ELM', 'EUR', 'EUR', 0.8],
  ['EQ-FIR', null, null, 0.3],
  ['EQ-GORSE', 'USD', null, 0],
];
const PORTFOLIOS = ['acct-growth', 'acct-income', 'acct-balanced'];

/** Deliveries over `tradingDays` weekdays from Monday 2024-01-01; a failing seed can be replayed. */
export function randomDeliveries(seed: number, tradingDays = 30): Deliveries {
  const { uniform: random } = createRandom(seed);
  const out: Deliveries = { prices: [], positions: [], fx: [], securities: [] };
  let fileId = 1;
  out.securities = UNIVERSE.map(([securityId, currency], i) => ({ fileId, line: i + 1, securityId, currency }));

  const weekdays = businessDays('2024-01-01', tradingDays);
  const level = new Map(UNIVERSE.map(([id]) => [id, 20 + random() * 80]));
  const fxLevel = new Map([['EUR', 1.1], ['GBP', 1.27]]);
  const corrections: Omit<PriceRow, 'fileId' | 'line'>[] = [];

  for (const date of weekdays) {
    fileId++;
    let line = 0;
    for (const [securityId, , priceCurrency, chance] of UNIVERSE) {
      level.set(securityId, level.get(securityId)! * Math.exp((random() - 0.5) * 0.06));
      if (random() >= chance) continue; // a market holiday or a missed delivery
      out.prices.push({ fileId, line: ++line, date, securityId, price: level.get(securityId)!, currency: priceCurrency });
      if (random() < 0.1) corrections.push({ date, securityId, price: level.get(securityId)! * 1.01, currency: priceCurrency });
    }
    fileId++;
    line = 0;
    for (const currency of ['EUR', 'GBP']) {
      fxLevel.set(currency, fxLevel.get(currency)! * Math.exp((random() - 0.5) * 0.01));
      if (random() < 0.8) out.fx.push({ fileId, line: ++line, date, currency, rate: fxLevel.get(currency)! });
    }
    for (const portfolioId of PORTFOLIOS) {
      const first = date === weekdays[0];
      if (!first && random() >= 0.4) continue;
      // a snapshot, sometimes delivered again later with other contents (the later file wins)
      const deliveries = random() < 0.15 ? 2 : 1;
      for (let k = 0; k < deliveries; k++) {
        fileId++;
        line = 0;
        for (const [securityId] of UNIVERSE) {
          if (random() < 0.55) {
            const quantity = random() < 0.1 ? 0 : Math.round(1 + random() * 200);
            out.positions.push({ fileId, line: ++line, date, portfolioId, securityId, quantity });
          }
        }
        out.positions.push({ fileId, line: ++line, date, portfolioId, securityId: 'CASH:USD', quantity: Math.round(random() * 5000) });
        if (random() < 0.5) out.positions.push({ fileId, line: ++line, date, portfolioId, securityId: 'CASH:EUR', quantity: Math.round(random() * 3000) });
      }
    }
  }
  // corrections arrive after everything else
  fileId++;
  out.prices.push(...corrections.map((c, i) => ({ ...c, fileId, line: i + 1 })));
  return out;
}
