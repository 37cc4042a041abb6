import { z } from 'zod';
import { currencyCode, isoDate } from './codes.ts';

/** The `stress` part of the config: named moves applied to each portfolio's latest holdings (SPEC section 9). */

const shockReturn = z.number().min(-1).describe('Simple return of the move, e.g. -0.2 for -20%.');

export const shockSchema = z.union([
  z.object({ all: z.literal(true).describe('Every holding except cash.'), return: shockReturn }).strict(),
  z.object({ assetClass: z.string().min(1).describe('The securities\' asset_class.'), return: shockReturn }).strict(),
  z.object({ currency: currencyCode.describe('Every holding in this currency, cash included, in base terms.'), return: shockReturn }).strict(),
  z.object({ security: z.string().min(1).describe('One security_id.'), return: shockReturn }).strict(),
]);

export const stressScenarioSchema = z.discriminatedUnion('kind', [
  z
    .object({
      id: z.string().min(1).describe('Scenario id in stress_results.'),
      kind: z.literal('historical'),
      from: isoDate.describe('Close the move starts from.'),
      to: isoDate.describe('Close the move ends at: each security\'s compounded return over the returns dated after from up to to.'),
    })
    .strict(),
  z
    .object({
      id: z.string().min(1).describe('Scenario id in stress_results.'),
      kind: z.literal('hypothetical'),
      shocks: z.array(shockSchema).min(1).describe('Most specific price shock wins (security, asset class, all); a currency shock compounds with it.'),
    })
    .strict(),
]);
export type StressScenario = z.infer<typeof stressScenarioSchema>;

export const stressSchema = z
  .object({
    scenarios: z
      .array(stressScenarioSchema)
      .default([])
      .describe('Named moves applied to each portfolio\'s latest holdings; the worst 1-, 5- and 20-day windows of its history are added.'),
  })
  .strict();

/** Scenario ids of the worst windows of a portfolio's own history, reserved: worst_1d, worst_5d, worst_20d. */
export const WORST_WINDOW_PREFIX = 'worst_';

/** Refusals the schema cannot express: repeated or reserved ids, ranges backwards, shocks that mean nothing. */
export function checkStressScenarios(scenarios: readonly StressScenario[], baseCurrency: string, ctx: z.RefinementCtx): void {
  const scenarioIds = new Set<string>();
  scenarios.forEach((scenario, i) => {
    if (scenarioIds.has(scenario.id) || scenario.id.startsWith(WORST_WINDOW_PREFIX)) {
      ctx.addIssue({ code: 'custom', path: ['stress', 'scenarios', i, 'id'], message: `scenario id "${scenario.id}" is taken` });
    }
    scenarioIds.add(scenario.id);
    if (scenario.kind === 'historical' && !(scenario.from < scenario.to)) {
      ctx.addIssue({ code: 'custom', path: ['stress', 'scenarios', i], message: `needs from < to, got ${scenario.from} .. ${scenario.to}` });
    }
    if (scenario.kind !== 'hypothetical') return;
    const targets = new Set<string>();
    scenario.shocks.forEach((shock, k) => {
      const [target] = Object.entries(shock).filter(([name]) => name !== 'return');
      const key = `${target[0]} ${String(target[1])}`;
      const at = ['stress', 'scenarios', i, 'shocks', k];
      if (targets.has(key)) ctx.addIssue({ code: 'custom', path: at, message: `a second shock on ${key}` });
      targets.add(key);
      if ('currency' in shock && shock.currency === baseCurrency) {
        ctx.addIssue({ code: 'custom', path: at, message: `the base currency ${baseCurrency} cannot move against itself` });
      }
    });
  });
}
