import type { Command } from 'commander';
import { lazyAction } from '../define.ts';

export function registerDemo(program: Command): void {
  program
    .command('demo [dir]')
    .description('builds an invented scenario in DIR (default: a fresh folder), runs the whole pipeline on it and prints a summary')
    .option('--config <path>', 'not read: the demo writes its own pipeline.config.json into DIR')
    .option('--seed <n>', 'seed of the simulation (same seed, same files)', (v) => Number.parseInt(v, 10))
    .action(lazyAction(async () => (await import('../actions/demo.ts')).runDemoCommand));
}
