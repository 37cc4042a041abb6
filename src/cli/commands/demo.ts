import type { Command } from 'commander';
import { runDemo } from '../../demo/runDemo.ts';
import { formatSummary } from '../../demo/summary.ts';
import { createLogger } from '../../log/logger.ts';

export function registerDemo(program: Command): void {
  program
    .command('demo [dir]')
    .description('builds an invented scenario in DIR (default: a fresh folder), runs the whole pipeline on it and prints a summary')
    .option('--config <path>', 'not read: the demo writes its own pipeline.config.json into DIR')
    .option('--seed <n>', 'seed of the simulation (same seed, same files)', (v) => Number.parseInt(v, 10))
    .action(async (dir: string | undefined, opts: { seed?: number }) => {
      // the pipeline's log lines (alerts and rejections among them, which the summary
      // lists anyway) would bury the summary: errors only, unless asked for more
      const log = createLogger({ level: process.env.RISKFOLD_LOG_LEVEL ?? 'error' });
      process.stderr.write('riskfold demo: building the scenario and running the pipeline on it...\n');
      const result = await runDemo(log, {
        dir,
        seed: opts.seed,
        onDelivery: (delivery, i, total) => {
          if (i === 0 || (i + 1) % 25 === 0 || i + 1 === total) {
            process.stderr.write(`  ${delivery.label} (${delivery.asOf}) processed, ${i + 1} of ${total}\n`);
          }
        },
      });
      process.stdout.write(formatSummary(result.summary, result));
    });
}
