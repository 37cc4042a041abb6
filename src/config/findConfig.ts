import { existsSync } from 'node:fs';
import path from 'node:path';
import { RiskfoldError } from '../errors.ts';

export const DEFAULT_CONFIG_FILE = 'pipeline.config.json';

export const HOW_TO_MAKE_ONE = 'create one with "riskfold init [DIR]"';

/**
 * Which config file a command uses: `--config` when given, else the file named by the
 * environment variable RISKFOLD_CONFIG, else ./pipeline.config.json in `cwd`; when none
 * applies, an error that says how to make one.
 */
export function findConfigFile(given: string | undefined, env: NodeJS.ProcessEnv = process.env, cwd = process.cwd()): string {
  if (given !== undefined) return given;
  if (env.RISKFOLD_CONFIG) return env.RISKFOLD_CONFIG;
  const local = path.join(cwd, DEFAULT_CONFIG_FILE);
  if (existsSync(local)) return local;
  throw new RiskfoldError(
    'config_missing',
    `no ${DEFAULT_CONFIG_FILE} in ${cwd}, no --config and no RISKFOLD_CONFIG: ${HOW_TO_MAKE_ONE}, or name yours with --config PATH`,
  );
}
