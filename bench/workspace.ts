import { copyFileSync, mkdirSync, renameSync, rmSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { loadConfig, type Config } from '../src/config/load.ts';
import type { ConfigInput } from '../src/config/schema.ts';
import type { ScenarioSize } from './scenario.ts';

export interface BenchWorkspace {
  dir: string;
  configPath: string;
  config: Config;
  remove: () => void;
}

/**
 * The config every measurement runs with: the scenario's windows, EWMA on (the
 * default), the shrunk estimator on the middle window, product defaults everywhere else (stable-file wait included, so the latency
 * figure is what a user gets), and limits near the simulated portfolios' volatility
 * so that episodes open and close and the limit check and alert outbox do real work,
 * a backtest-zone limit and three stress scenarios.
 */
export function benchConfig(size: ScenarioSize): ConfigInput {
  return {
    inbox: 'inbox',
    archive: 'archive',
    quarantine: 'quarantine',
    database: 'riskfold.duckdb',
    // the shrunk estimator on the middle window, so its cost is in every figure (and reported on its own by the backfill)
    risk: { windows: size.windows, tradingDaysPerYear: 252, shrunk: { windows: [size.windows[Math.floor(size.windows.length / 2)]] } },
    limits: [
      { portfolio: '*', window: size.windows.includes(63) ? 63 : size.windows[0], limit: 0.16 },
      { portfolio: '*', window: 0, estimator: 'ewma', limit: 0.18 },
      // the VaR backtests' Basel zone, every method: the limit check reads var_backtest too
      { portfolio: '*', metric: 'backtest_zone', window: size.windows[0] },
    ],
    // a range early in every size's history (it starts 2016-01-04), a shock by asset class
    // and currency, and one on everything: the loss stage's stress step does real work
    stress: {
      scenarios: [
        { id: 'bench-range', kind: 'historical', from: '2016-02-01', to: '2016-02-29' },
        { id: 'bench-equity-eur', kind: 'hypothetical', shocks: [{ assetClass: 'equity', return: -0.2 }, { currency: 'EUR', return: -0.1 }] },
        { id: 'bench-all', kind: 'hypothetical', shocks: [{ all: true, return: -0.15 }] },
      ],
    },
    alerts: { file: 'alerts.jsonl' },
  };
}

/** A fresh folder under `root` with its pipeline.config.json; nothing is opened yet. */
export function createBenchWorkspace(root: string, name: string, size: ScenarioSize): BenchWorkspace {
  const dir = path.join(root, name);
  rmSync(dir, { recursive: true, force: true });
  mkdirSync(dir, { recursive: true });
  const configPath = path.join(dir, 'pipeline.config.json');
  writeFileSync(configPath, `${JSON.stringify(benchConfig(size), null, 2)}\n`);
  const config = loadConfig(configPath);
  mkdirSync(config.inbox, { recursive: true });
  return { dir, configPath, config, remove: () => rmSync(dir, { recursive: true, force: true }) };
}

/**
 * Puts a scenario file into an inbox in one step: a copy under a hidden name beside the
 * inbox, then a rename, so it lands whole. Not a hard link: ingest refuses a file with a
 * second name outside the inbox.
 */
export function dropIntoInbox(file: string, inbox: string): string {
  const target = path.join(inbox, path.basename(file));
  const staging = path.join(path.dirname(inbox), `.${path.basename(file)}.staging`);
  copyFileSync(file, staging);
  renameSync(staging, target);
  return target;
}
