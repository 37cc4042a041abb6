import { findConfigFile, loadConfig, type Config } from '../config/load.ts';
import { createLogger, type Logger } from '../log/logger.ts';

export interface CommandContext {
  config: Config;
  log: Logger;
}

export function contextFrom(opts: { config?: string }): CommandContext {
  return { config: loadConfig(findConfigFile(opts.config)), log: createLogger() };
}
