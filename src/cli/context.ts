import type { Command } from 'commander';
import { findConfigFile, loadConfig, type Config } from '../config/load.ts';
import { RiskfoldError } from '../errors.ts';
import { createLogger, type Logger } from '../log/logger.ts';
import { forTerminal } from './terminalText.ts';

export interface CommandContext {
  config: Config;
  log: Logger;
}

/** Adds the option every command takes. */
export function withConfigOption(cmd: Command): Command {
  return cmd.option('--config <path>', 'pipeline config file (default: $RISKFOLD_CONFIG, else ./pipeline.config.json)');
}

/** The config a command runs on: --config, else RISKFOLD_CONFIG, else ./pipeline.config.json. */
export function configFrom(opts: { config?: string }): Config {
  return loadConfig(findConfigFile(opts.config));
}

export function contextFrom(opts: { config?: string }): CommandContext {
  return { config: configFrom(opts), log: createLogger() };
}

/** One clear line on stderr and a non-zero exit; the stack only with RISKFOLD_DEBUG. */
export function reportFailure(err: unknown): never {
  const message = err instanceof Error ? err.message : String(err);
  const cause = err instanceof Error && err.cause instanceof Error ? `: ${err.cause.message}` : '';
  process.stderr.write(forTerminal(`riskfold: ${message}${err instanceof RiskfoldError ? '' : cause}\n`));
  if (process.env.RISKFOLD_DEBUG && err instanceof Error) process.stderr.write(`${err.stack}\n`);
  process.exit(err instanceof RiskfoldError && err.kind === 'usage' ? 2 : 1);
}
