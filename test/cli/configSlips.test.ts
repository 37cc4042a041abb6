import { mkdtempSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { writeCsv } from '../helpers/files.ts';
import { MINIMAL_CONFIG } from '../helpers/workspace.ts';
import { runCli } from './cliProcess.ts';

describe('riskfold catches config slips before doing anything', () => {
  let dir: string | undefined;
  afterEach(() => {
    if (dir) rmSync(dir, { recursive: true, force: true });
  });

  function configFile(text: string): string {
    dir = mkdtempSync(path.join(tmpdir(), 'riskfold-slips-'));
    const file = path.join(dir, 'pipeline.config.json');
    writeFileSync(file, text);
    return file;
  }

  it('refuses a limit written as a percentage, suggesting the fraction', () => {
    const file = configFile(JSON.stringify({ ...MINIMAL_CONFIG, limits: [{ portfolio: '*', window: 63, limit: 15, warning: 0.12 }] }));
    const r = runCli(['status', '--config', file]);
    expect(r.status).not.toBe(0);
    expect(r.stderr).toContain('15 is above 1, but levels are fractions (0.15 = 15%); did you mean 0.15?\n  → at limits[0].limit');
  });

  it('suggests the nearest known key for a misspelt one, at any depth', () => {
    const file = configFile(JSON.stringify({ ...MINIMAL_CONFIG, quarantaine: 'q', risk: { windows: [63], tradingDaysPerYaer: 252 } }));
    const r = runCli(['status', '--config', file]);
    expect(r.status).not.toBe(0);
    expect(r.stderr).toContain('unknown key "quarantaine"; did you mean "quarantine"?');
    expect(r.stderr).toContain('unknown key "tradingDaysPerYaer"; did you mean "tradingDaysPerYear"?\n  → at risk');
  });

  it('gives the line and column of a JSON syntax error, as an editor counts them', () => {
    // line 3 holds a trailing comma before "}" on line 4, column 1 (RFC 8259 allows no trailing comma)
    const file = configFile('{\n  "inbox": "inbox",\n  "database": "riskfold.duckdb",\n}\n');
    const r = runCli(['status', '--config', file]);
    expect(r.status).not.toBe(0);
    expect(r.stderr).toMatch(new RegExp(`^riskfold: ${file.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}:4:1: not valid JSON \\(`));
  });

  it('adds listed sources to the defaults; replaceDefaultSources keeps only the listed ones', () => {
    const custodian = { name: 'north-custody', kind: 'prices', pattern: 'ncb_*.csv', delimiter: ';', decimal: ',', dateFormat: '%d.%m.%Y' };
    const file = configFile(JSON.stringify({ ...MINIMAL_CONFIG, sources: [custodian] }));
    const inbox = path.join(dir!, 'inbox');
    writeCsv(inbox, 'ncb_1130.csv', [['date', 'security_id', 'price'], ['30.11.2026', 'EQ-NORDWIND', '1.045,10']], { delimiter: ';' });
    writeCsv(inbox, 'fx_1130.csv', [['date', 'currency', 'rate'], ['2026-11-30', 'EUR', '1.08']]);
    const added = runCli(['ingest', '--config', file]);
    expect(added.stdout).toMatch(/ingested\s+fx_1130\.csv: 1 row of fx/);
    expect(added.stdout).toMatch(/ingested\s+ncb_1130\.csv: 1 row of prices/);

    writeFileSync(file, JSON.stringify({ ...MINIMAL_CONFIG, sources: [custodian], replaceDefaultSources: true }));
    writeCsv(inbox, 'fx_1201.csv', [['date', 'currency', 'rate'], ['2026-12-01', 'EUR', '1.09']]);
    const replaced = runCli(['ingest', '--config', file]);
    expect(replaced.stdout).toMatch(/rejected\s+fx_1201\.csv: .*ncb_\*\.csv/);
    expect(readdirSync(path.join(dir!, 'quarantine'))).toContain('fx_1201.csv');
  });
});
