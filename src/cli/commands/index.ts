import type { Command } from 'commander';
import { registerInit } from './init.ts';
import { registerWatch } from './watch.ts';
import { registerIngest } from './ingest.ts';
import { registerRecompute } from './recompute.ts';
import { registerSql } from './sql.ts';
import { registerStatus } from './status.ts';
import { registerAlerts } from './alerts.ts';
import { registerReport } from './report.ts';
import { registerExplain } from './explain.ts';
import { registerDemo } from './demo.ts';

/** Every command of `riskfold`, in the order --help lists them. */
export const COMMANDS: ((program: Command) => void)[] = [
  registerInit,
  registerWatch,
  registerIngest,
  registerRecompute,
  registerSql,
  registerStatus,
  registerAlerts,
  registerReport,
  registerExplain,
  registerDemo,
];
