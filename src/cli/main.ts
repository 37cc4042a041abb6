import { Command } from 'commander';
import { RiskfoldError } from '../errors.ts';
import { COMMANDS } from './commands/index.ts';
import { forTerminal } from './terminalText.ts';

const program = new Command()
  .name('riskfold')
  .description('Keeps portfolio risk up to date from the files dropped into a holdings folder.')
  .showHelpAfterError('(run "riskfold <command> --help" for the options)')
  .configureOutput({ outputError: (text, write) => write(text) });

for (const register of COMMANDS) register(program);

program.parseAsync(process.argv).catch((err: unknown) => {
  reportFailure(err);
});

/** One clear line on stderr and a non-zero exit; the stack only with RISKFOLD_DEBUG. */
function reportFailure(err: unknown): never {
  const message = err instanceof Error ? err.message : String(err);
  const cause = err instanceof Error && err.cause instanceof Error ? `: ${err.cause.message}` : '';
  process.stderr.write(forTerminal(`riskfold: ${message}${err instanceof RiskfoldError ? '' : cause}\n`));
  if (process.env.RISKFOLD_DEBUG && err instanceof Error) process.stderr.write(`${err.stack}\n`);
  process.exit(err instanceof RiskfoldError && err.kind === 'usage' ? 2 : 1);
}
