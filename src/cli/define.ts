import type { Command } from 'commander';

// What the command definitions (src/cli/commands) use. It imports nothing heavy: the
// definitions are all loaded for --help, their actions only when their command runs.

/** Adds the option every command takes. */
export function withConfigOption(cmd: Command): Command {
  return cmd.option('--config <path>', 'pipeline config file (default: $RISKFOLD_CONFIG, else ./pipeline.config.json)');
}

/**
 * A command's action whose module (src/cli/actions) is imported only when that command
 * runs, so `--help` and a read command never load what another command needs (DuckDB,
 * the risk engine, the report).
 */
export function lazyAction<A extends unknown[]>(load: () => Promise<(...args: A) => unknown>): (...args: A) => Promise<void> {
  return async (...args: A) => {
    const action = await load();
    await action(...args);
  };
}
