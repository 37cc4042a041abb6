import { Command } from 'commander';
import { COMMANDS } from './commands/index.ts';
import { reportFailure } from './context.ts';

const program = new Command()
  .name('riskfold')
  .description('Keeps portfolio risk up to date from the files dropped into a holdings folder.')
  .showHelpAfterError('(run "riskfold <command> --help" for the options)')
  .configureOutput({ outputError: (text, write) => write(text) });

for (const register of COMMANDS) register(program);

program.parseAsync(process.argv).catch((err: unknown) => {
  reportFailure(err);
});
