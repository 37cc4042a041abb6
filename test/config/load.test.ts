import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { loadConfig, resolveConfig } from '../../src/config/load.ts';
// the minimal file of SPEC §6, verbatim: it must load with everything else defaulted
import { MINIMAL_CONFIG as MINIMAL } from '../helpers/workspace.ts';


describe('loadConfig', () => {
  it('accepts the minimal config of the specification and fills the defaults', () => {
    const dir = mkdtempSync(path.join(tmpdir(), 'rf-config-'));
    const file = path.join(dir, 'pipeline.config.json');
    writeFileSync(file, JSON.stringify(MINIMAL));
    const cfg = loadConfig(file);
    expect(cfg.inbox).toBe(path.join(dir, 'inbox'));
    expect(cfg.database).toBe(path.join(dir, 'riskfold.duckdb'));
    expect(cfg.readCopy).toBe(path.join(dir, 'riskfold.read.duckdb'));
    expect(cfg.alerts.file).toBe(path.join(dir, 'alerts.jsonl'));
    expect(cfg.baseCurrency).toBe('USD');
    expect(cfg.risk.maxStaleDays).toBe(5);
    expect(cfg.risk.ewma.lambda).toBe(0.94);
    expect(cfg.risk.weights).toBe('current');
    expect(cfg.alerts.maxAgeDays).toBe(5);
    // SPEC §3 and §9 (benchmarks)
    expect(cfg.sources.map((s) => s.pattern)).toEqual(['prices*.csv*', 'positions*.csv*', 'fx*.csv*', 'securities*.csv*', 'benchmarks*.csv*']);
    expect(cfg.benchmarks).toEqual({});
    // SPEC §6: warning defaults to 0.9 x limit, clear to 0.85 x limit
    expect(cfg.limits[0]).toMatchObject({ metric: 'vol_ex_ante', estimator: 'sample', limit: 0.15 });
    expect(cfg.limits[0].warning).toBeCloseTo(0.135, 12);
    expect(cfg.limits[0].clear).toBeCloseTo(0.1275, 12);
    expect(Object.isFrozen(cfg.limits[0])).toBe(true);
  });

  it('names the field and what was expected when a value is wrong', () => {
    expect(() => resolveConfig({ risk: { windows: 'sixty-three' } }, 'cfg.json')).toThrow(/cfg\.json[\s\S]*risk\.windows/);
    expect(() => resolveConfig({ baseCurrency: 'usd' }, 'cfg.json')).toThrow(/baseCurrency[\s\S]*|ISO 4217/);
    expect(() => resolveConfig({ colour: 'blue' }, 'cfg.json')).toThrow(/colour/);
    // a required key left out is missing, not "received undefined"
    expect(() => resolveConfig({ limits: [{ portfolio: '*', limit: 0.1 }] }, 'cfg.json')).toThrow(/is missing \(a number is required\)[\s\S]*limits\[0\]\.window/);
  });

  it('refuses limits whose levels are out of order or whose window is not computed', () => {
    expect(() =>
      resolveConfig({ risk: { windows: [63] }, limits: [{ portfolio: '*', window: 63, limit: 0.1, clear: 0.2 }] }, 'c.json'),
    ).toThrow(/clear < warning <= limit[\s\S]*limits\[0\]/);
    expect(() => resolveConfig({ risk: { windows: [63] }, limits: [{ portfolio: '*', window: 21, limit: 0.1 }] }, 'c.json')).toThrow(
      /window 21 is not in risk\.windows/,
    );
  });

  it('refuses a tracking error limit no benchmark is set for, and takes it once one is', () => {
    const te = (portfolio: string) => ({ portfolio, metric: 'tracking_error_ex_ante' as const, window: 63, limit: 0.03 });
    expect(() => resolveConfig({ risk: { windows: [63] }, limits: [te('*')] }, 'c.json')).toThrow(/needs a benchmark[\s\S]*limits\[0\]/);
    expect(() => resolveConfig({ risk: { windows: [63] }, limits: [te('acct-a')], benchmarks: { 'acct-b': 'bm-1' } }, 'c.json')).toThrow(
      /"benchmarks": \{ "acct-a": "<benchmark_id>" \}/,
    );
    expect(resolveConfig({ risk: { windows: [63] }, limits: [te('acct-a')], benchmarks: { '*': 'bm-1' } }, 'c.json').limits).toHaveLength(1);
    expect(resolveConfig({ risk: { windows: [63] }, limits: [te('*')], benchmarks: { 'acct-b': 'bm-1' } }, 'c.json').limits).toHaveLength(1);
  });

  it('refuses stress scenarios that cannot mean anything, naming the place', () => {
    const stress = (scenarios: unknown[]) => () => resolveConfig({ stress: { scenarios } }, 'c.json');
    expect(stress([{ id: 'usd-down', kind: 'hypothetical', shocks: [{ currency: 'USD', return: -0.1 }] }])).toThrow(
      /base currency USD cannot move against itself[\s\S]*stress\.scenarios\[0\]\.shocks\[0\]/,
    );
    expect(stress([{ id: 'two', kind: 'hypothetical', shocks: [{ all: true, return: -0.1 }, { all: true, return: -0.2 }] }])).toThrow(/a second shock on all/);
    expect(stress([{ id: 'worst_1d', kind: 'historical', from: '2024-01-02', to: '2024-02-01' }])).toThrow(/"worst_1d" is taken/);
    expect(stress([{ id: 'back', kind: 'historical', from: '2024-02-01', to: '2024-01-02' }])).toThrow(/needs from < to/);
    expect(stress([{ id: 'deep', kind: 'hypothetical', shocks: [{ all: true, return: -1.5 }] }])).toThrow(/return/);
  });

  it('says which file could not be read', () => {
    expect(() => loadConfig('/nonexistent/pipeline.config.json')).toThrow(/\/nonexistent\/pipeline\.config\.json/);
  });
});
