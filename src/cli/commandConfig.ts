import { findConfigFile, loadConfig, type Config } from '../config/load.ts';

/**
 * The config a command runs on: --config, else RISKFOLD_CONFIG, else ./pipeline.config.json.
 * Apart from the logger (context.ts), so the read commands do not load it.
 */
export function configFrom(opts: { config?: string }): Config {
  return loadConfig(findConfigFile(opts.config));
}
