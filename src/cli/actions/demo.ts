import { runDemo } from '../../demo/runDemo.ts';
import { formatSummary } from '../../demo/summary.ts';
import { createLogger } from '../../log/logger.ts';

/** `riskfold demo [DIR]`. */
export async function runDemoCommand(dir: string | undefined, opts: { seed?: number }): Promise<void> {
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
}
