import { memoizedConfig } from '../config/configMemo.ts';
import { findConfigFile } from '../config/findConfig.ts';
import type { Config } from '../config/load.ts';

/**
 * The config a read command (sql, status, report, explain) runs on: --config, else
 * RISKFOLD_CONFIG, else ./pipeline.config.json; through the memo of its last parse, so a
 * read of an unchanged config does not load the schema. Apart from the logger
 * (context.ts), so the read commands do not load it.
 */
export function readerConfigFrom(opts: { config?: string }): Promise<Config> {
  return memoizedConfig(findConfigFile(opts.config));
}
