import type { Config } from '../config/load.ts';
import { createLogger, type Logger } from '../log/logger.ts';
import { configFrom } from './commandConfig.ts';

export interface CommandContext {
  config: Config;
  log: Logger;
}

export function contextFrom(opts: { config?: string }): CommandContext {
  return { config: configFrom(opts), log: createLogger() };
}
