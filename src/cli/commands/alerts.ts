import type { Command } from 'commander';
import { lazyAction, withConfigOption } from '../define.ts';

/**
 * `riskfold alerts [--undelivered]` lists the outbox; `riskfold alerts retry [ID...]`
 * makes undelivered alerts due again (without ids: those that used up maxAttempts).
 */
export function registerAlerts(program: Command): void {
  withConfigOption(
    program
      .command('alerts')
      .argument('[action...]', '"retry [ID...]" re-arms undelivered alerts: the ids given, or without ids every one that used up maxAttempts')
      .description('lists alerts, newest first (delivered or not, attempts, last error); "alerts retry [ID...]" makes them due again')
      .option('--undelivered', 'only alerts not yet delivered to every channel')
      .option('--limit <n>', 'at most this many rows', '50')
      .option('--format <format>', 'table, csv or json', 'table'),
  ).action(lazyAction(async () => (await import('../actions/alerts.ts')).runAlerts));
}
