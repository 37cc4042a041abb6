import { existsSync, mkdirSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';
import { runCli } from './cliProcess.ts';

// The read-only `sql` reaches the database and nothing else unless told, and never lets
// data steer the terminal (ECMA-48 escapes, Unicode Standard Annex #9 bidi controls).
describe('riskfold sql is sandboxed', () => {
  let ws: TempWorkspace;
  const cli = (...args: string[]) => runCli([...args, '--config', ws.config.configPath]);

  beforeAll(async () => {
    ws = await tempWorkspace();
    ws.closeDb(); // an empty history is enough: the point is what else a query can reach
    mkdirSync(path.join(ws.dir, 'extracts'));
    writeFileSync(path.join(ws.dir, 'extracts', 'fx.csv'), 'currency,rate\nEUR,1.08\n');
  });
  afterAll(() => ws.cleanup());

  it('refuses EXPORT DATABASE in one line and creates nothing on disk', () => {
    const target = path.join(ws.dir, 'dump');
    const r = cli('sql', `export database '${target}'`);
    expect(r.status).not.toBe(0);
    expect(r.stderr).toBe('riskfold: refused: EXPORT statements may write; sql runs only reads (select, with, describe, show, summarize, explain)\n');
    expect(existsSync(target)).toBe(false);
  });

  it('cannot read local files unless --read-files opts a folder in', () => {
    const file = path.join(ws.dir, 'extracts', 'fx.csv');
    const closed = cli('sql', `select * from read_csv('${file}')`);
    expect(closed.status).not.toBe(0);
    expect(closed.stderr).toMatch(/file system operations are disabled by configuration/);
    const config = cli('sql', `select * from read_text('${ws.config.configPath}')`, '--read-files', path.join(ws.dir, 'extracts'));
    expect(config.stderr).toMatch(/disabled by configuration/);
    const open = cli('sql', `select currency, rate from read_csv('${file}')`, '--read-files', path.join(ws.dir, 'extracts'), '--format', 'csv');
    expect(open.stdout).toBe('currency,rate\nEUR,1.08\n');
  });

  it('prints control and bidi characters of the data as visible escapes', () => {
    const query = "select 'EQ-' || chr(27) || '[2J' || chr(8238) || 'X' as security_id";
    expect(cli('sql', query).stdout).toBe('security_id\n---------------------\nEQ-\\u{1b}[2J\\u{202e}X\n(1 row)\n');
    const json = cli('sql', query, '--format', 'json').stdout;
    expect(json).toContain('"EQ-\\u001b[2J\\u202eX"');
    expect(JSON.parse(json)).toEqual([{ security_id: 'EQ-\u001b[2J\u202eX' }]);
  });
});
