import { readFileSync } from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { writeCsv } from '../helpers/files.ts';
import { workerDir, type WorkerDir } from '../helpers/workspace.ts';
import { runCli } from './cliProcess.ts';

// Invented custodian files, each with one slip whose fix is a setting or the file itself.
// Lines are counted as editors count them: the header is line 1 (RFC 4180 section 2: the
// optional header line is the file's first line).
describe('riskfold ingest says the likely fix of a rejected file', () => {
  let desk: WorkerDir;
  let stdout: string;
  const reason = (name: string) => readFileSync(path.join(desk.config.quarantine, `${name}.reason.txt`), 'utf8');
  const line = (name: string) => stdout.split('\n').find((l) => l.startsWith(`rejected   ${name} `) || l.startsWith(`rejected   ${name},`)) ?? '';

  beforeAll(() => {
    desk = workerDir();
    const inbox = desk.config.inbox;
    writeCsv(inbox, 'prices_semicolon.csv', [['date', 'security_id', 'price', 'currency'], ['2026-11-30', 'EQ-NORDWIND', '101.5', 'EUR']], { delimiter: ';' });
    writeCsv(inbox, 'prices_european.csv', [['date', 'security_id', 'price'], ['30.11.2026', 'EQ-NORDWIND', '101.5']]);
    writeCsv(inbox, 'prices_oneslip.csv', [['date', 'security_id', 'price'], ['2026-11-27', 'EQ-NORDWIND', '101.5'], ['2026-11-30', 'EQ-SALTMARSH', '99'], ['30.11.2026', 'EQ-NORDWIND', '101.5']]);
    writeCsv(inbox, 'positions_thousands.csv', [['date', 'portfolio_id', 'security_id', 'quantity'], ['2026-11-30', 'acct-growth', 'EQ-NORDWIND', '"1,045.10"']]);
    writeCsv(inbox, 'prices_comma.csv', [['date', 'security_id', 'price'], ['2026-11-30', 'EQ-NORDWIND', '"1.045,10"']]);
    writeCsv(inbox, 'prices_negative.csv', [['date', 'security_id', 'price'], ['2026-11-30', 'EQ-NORDWIND', '5'], ['2026-11-30', 'EQ-SALTMARSH', '-5']]);
    stdout = runCli(['ingest', '--config', desk.configPath]).stdout;
  });
  afterAll(() => desk.cleanup());

  it('a header split by another delimiter suggests "delimiter", and the fix is the config', () => {
    expect(line('prices_semicolon.csv')).toContain('column date: is missing; header found: "date;security_id;price;currency"; the header splits on ";" into the expected columns: set "delimiter": ";" in source "prices"');
    expect(reason('prices_semicolon.csv')).toMatch(/\n\nThe fix belongs in the config, not in the file/);
  });

  it('dates in another recognisable format suggest "dateFormat" on the first row, and a file fix further down', () => {
    expect(line('prices_european.csv')).toContain('prices_european.csv line 2, column date: "30.11.2026" is not a date in the format %Y-%m-%d; this looks like "%d.%m.%Y": if the sender writes dates that way, set "dateFormat": "%d.%m.%Y" in source "prices"');
    expect(line('prices_oneslip.csv')).toContain('prices_oneslip.csv line 4, column date: "30.11.2026" is not a date in the format %Y-%m-%d; the rows above it were read as "%Y-%m-%d" but this one looks like "%d.%m.%Y": correct it in the file');
    expect(reason('prices_oneslip.csv')).toMatch(/line: {5}4 \(the header is line 1\)[\s\S]*\n\nFix the file and drop it into the inbox again/);
  });

  it('thousands separators and a decimal comma are told apart', () => {
    expect(line('positions_thousands.csv')).toContain('"1,045.10" is not a number; "," here separates thousands, which no setting reads beside a decimal point: the sender must write 1045.10');
    expect(line('prices_comma.csv')).toContain('"1.045,10" is not a positive number; this is written with a decimal comma: if the sender writes numbers that way, set "decimal": "," in source "prices"');
  });

  it('names the same line in the message, the reason file and the ledger', () => {
    expect(line('prices_negative.csv')).toContain('prices_negative.csv line 3, column price: "-5" is not a positive number');
    expect(reason('prices_negative.csv')).toContain('line:     3 (the header is line 1)');
    const ledger = runCli(['sql', "select error from ingested_files where name = 'prices_negative.csv'", '--format', 'json', '--config', desk.configPath]).stdout;
    expect(JSON.parse(ledger)).toEqual([{ error: 'prices_negative.csv line 3, column price: "-5" is not a positive number' }]);
  });
});
