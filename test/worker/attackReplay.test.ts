import { appendFileSync, existsSync, readdirSync, utimesSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { gzipSync } from 'node:zlib';
import { describe, expect, it } from 'vitest';
import { openDatabase } from '../../src/storage/database.ts';
import { runCli, startCli, type RunningCli } from '../cli/cliProcess.ts';
import { pricesCsv } from '../helpers/files.ts';
import { waitFor } from '../helpers/wait.ts';
import { workerSlot } from '../helpers/workerFixture.ts';
import { workerDir } from '../helpers/workspace.ts';

/**
 * The attack on the worker, replayed on a real `riskfold watch` process with the inputs
 * that broke it: one file per bad row at the door, a correction landing just after its
 * original, a crowd of securities nobody holds, a gzip bomb, a positions snapshot cut at
 * a line break by a pause longer than watch.stableMs, and a bearer token holding CR/LF.
 * The kills, the full disk, the hard link and the sql sandbox have tests of their own
 * (killed*.test.ts, diskFull.test.ts, hardLink.test.ts, test/cli/sqlSandbox.test.ts).
 */
describe('the attack on the worker, replayed', () => {
  const slot = workerSlot();

  const batchesDone = (c: RunningCli) => c.logLines().filter((l) => l.msg === 'batch done');
  const put = (name: string, text: string | Buffer) => writeFileSync(path.join(slot.wd!.config.inbox, name), text);

  /** The worker's read copy (published after each batch), read while it runs. */
  async function fromReadCopy<T>(sql: string): Promise<T[]> {
    const copy = await openDatabase(slot.wd!.config.readCopy, { readOnly: true });
    try {
      return await copy.all<T>(sql);
    } finally {
      copy.close();
    }
  }

  it('refuses each poisoned row at the door while risk keeps being computed, applies a late correction last, and reads returns of held securities only', async () => {
    const wd = (slot.wd = workerDir({ ingest: { maxExpandedMB: 1 } }));
    put('prices_history.csv', pricesCsv(60, 2, '2026-06-01'));
    put('positions_0601.csv', 'date,portfolio_id,security_id,quantity\n2026-06-01,acct-a,EQ-NORDWIND,100\n2026-06-01,acct-a,EQ-SALTMARSH,50\n');
    // 300 securities nobody holds: once they made every later day 30x slower
    const crowd = Array.from({ length: 300 }, (_, i) => Array.from({ length: 5 }, (_, d) => `2026-06-0${d + 1},UNHELD-${i},${10 + d}`).join('\n'));
    put('prices_crowd.csv', `date,security_id,price\n${crowd.join('\n')}\n`);
    const poisoned: Record<string, { text: string; column: string; value: string }> = {
      'prices_year0.csv': { text: 'date,security_id,price\n0000-01-01,EQ-NORDWIND,100\n', column: 'date', value: '0000-01-01' },
      'prices_far.csv': { text: 'date,security_id,price\n9999-12-31,EQ-NORDWIND,100\n', column: 'date', value: '9999-12-31' },
      'prices_subnormal.csv': { text: 'date,security_id,price\n2026-06-02,EQ-NORDWIND,5e-324\n', column: 'price', value: '5e-324' },
      'prices_overflow.csv': { text: 'date,security_id,price\n2026-06-02,EQ-NORDWIND,1e308\n', column: 'price', value: '1e308' },
      'prices_underscore.csv': { text: 'date,security_id,price\n2026-06-02,EQ-NORDWIND,1_75.5\n', column: 'price', value: '1_75.5' },
      'positions_overflow.csv': { text: 'date,portfolio_id,security_id,quantity\n2026-06-02,acct-a,EQ-NORDWIND,1e307\n', column: 'quantity', value: '1e307' },
      'prices_ansi.csv': { text: 'date,security_id,price\n2026-06-02,EQ-\u001b[31mRED,100\n', column: 'security_id', value: 'EQ-\u001b[31mRED' },
      'positions_rtl.csv': { text: 'date,portfolio_id,security_id,quantity\n2026-06-02,acct\u202Ea,EQ-NORDWIND,1\n', column: 'portfolio_id', value: 'acct\u202Ea' },
      'prices_newline.csv': { text: 'date,security_id,price\n2026-06-02,"EQ-\nNL",100\n', column: 'security_id', value: 'EQ-\nNL' },
    };
    for (const [name, p] of Object.entries(poisoned)) put(name, p.text);
    put('prices_nul.csv', 'date,security_id,price\n2026-06-02,EQ-\u0000NUL,100\n');
    // 2 MB of one row compress to a few kilobytes: past the 1 MB limit while it is read
    put('prices_bomb.csv.gz', gzipSync(Buffer.from(`date,security_id,price\n${'2026-06-02,EQ-NORDWIND,100\n'.repeat(80_000)}`)));
    // an original and its correction 0.25 s later, their names in the opposite order
    put('prices_z_original.csv', 'date,security_id,price\n2026-06-10,EQ-CORRECTED,111\n');
    put('prices_a_correction.csv', 'date,security_id,price\n2026-06-10,EQ-CORRECTED,122\n');
    const t0 = Date.now() / 1000 - 60;
    utimesSync(path.join(wd.config.inbox, 'prices_z_original.csv'), t0, t0);
    utimesSync(path.join(wd.config.inbox, 'prices_a_correction.csv'), t0 + 0.25, t0 + 0.25);

    const worker = (slot.worker = startCli(['watch', '--config', wd.configPath], { RISKFOLD_LOG_LEVEL: 'debug' }));
    await waitFor(() => batchesDone(worker).length >= 1, 90_000, 'the catch-up batch');
    await waitFor(() => existsSync(wd.config.readCopy), 10_000, 'the read copy');

    const ledger = await fromReadCopy<{ name: string; status: string; error: string | null }>('select name, status, error from ingested_files order by file_id');
    const status = Object.fromEntries(ledger.map((f) => [f.name, f.status]));
    for (const [name, p] of Object.entries(poisoned)) {
      expect(status[name], name).toBe('rejected');
      const error = ledger.find((f) => f.name === name)!.error!;
      expect(error, name).toContain(`${name} line `);
      expect(error, name).toContain(`column ${p.column}`);
      // the value named, with control and bidirectional characters escaped
      expect(error, name).toContain(JSON.stringify(p.value).slice(1, -1).replace('\u202E', '\\u202e'));
      expect(error, name).not.toMatch(/[\u0000-\u0009\u000b-\u001f\u202e]/);
    }
    expect(status['prices_nul.csv']).toBe('rejected');
    expect(ledger.find((f) => f.name === 'prices_nul.csv')!.error).not.toContain('\u0000');
    expect(ledger.find((f) => f.name === 'prices_bomb.csv.gz')).toMatchObject({ status: 'rejected', error: 'prices_bomb.csv.gz: expands past 1 MB when decompressed; refused while reading' });
    for (const name of ['prices_history.csv', 'positions_0601.csv', 'prices_crowd.csv', 'prices_z_original.csv', 'prices_a_correction.csv']) expect(status[name], name).toBe('ingested');
    expect(ledger.map((f) => f.name).indexOf('prices_z_original.csv')).toBeLessThan(ledger.map((f) => f.name).indexOf('prices_a_correction.csv'));
    expect(await fromReadCopy("select price from clean_prices where date = '2026-06-10' and security_id = 'EQ-CORRECTED'")).toEqual([{ price: 122 }]);
    expect(await fromReadCopy("select count(*)::integer as n from prices where year(date) not between 1900 and 2100 or price > 1e15 or price < 1e-12")).toEqual([{ n: 0 }]);

    // the run after the poison finished, and read returns for the two held securities only
    expect(await fromReadCopy('select status from risk_runs order by run_id')).toEqual([{ status: 'done' }]);
    const inputs = worker.logLines().filter((l) => l.msg === 'inputs read');
    expect(inputs.map((l) => l.securities)).toEqual([2]);

    // later batches are not frozen: the next day's prices get their run too
    put('prices_next.csv', 'date,security_id,price\n2026-07-31,EQ-NORDWIND,105\n2026-07-31,EQ-SALTMARSH,103\n');
    await waitFor(() => batchesDone(worker).length >= 2, 60_000, 'the next batch');
    await waitFor(async () => (await fromReadCopy('select status from risk_runs order by run_id')).length === 2, 10_000, 'the next run in the read copy');
    expect(await fromReadCopy('select status from risk_runs order by run_id')).toEqual([{ status: 'done' }, { status: 'done' }]);
    expect(await fromReadCopy("select count(*)::integer as n from alerts where kind = 'run_failed'")).toEqual([{ n: 0 }]);
    worker.child.kill('SIGTERM');
    expect(await worker.exited).toEqual({ code: 0, signal: null });
    const top = runCli(['status', '--config', wd.configPath]);
    expect(top.status, top.stderr).toBe(0);
    expect(top.stdout).not.toContain('DID NOT FINISH');
    expect(top.stdout).not.toMatch(/[\u001b\u202e]/);
  }, 240_000);

  it('holds a positions snapshot cut at a line break by a long pause, loads it whole when the rest arrives, and keeps a CR/LF token out of everything', async () => {
    const token = 'tok3n-HEAD\r\nX-Injected: tok3n-TAIL';
    const wd = (slot.wd = workerDir({
      watch: { stableMs: 300, pollMs: 50 },
      alerts: { file: 'alerts.jsonl', webhook: { url: 'http://127.0.0.1:9/hook', tokenEnv: 'RISKFOLD_ATTACK_TOKEN', timeoutMs: 500, retryBaseMs: 60_000, retryMaxMs: 60_000 } },
    }));
    const ids = Array.from({ length: 41 }, (_, i) => `EQ-${String(i).padStart(2, '0')}`);
    const prices = ids.flatMap((id, i) => Array.from({ length: 30 }, (_, d) => `2026-06-${String(d + 1).padStart(2, '0')},${id},${(50 + i + Math.sin(d + i)).toFixed(4)}`));
    put('prices_june.csv', `date,security_id,price\n${prices.join('\n')}\n`);
    put('positions_0601.csv', `date,portfolio_id,security_id,quantity\n${ids.map((id) => `2026-06-01,acct-b,${id},100`).join('\n')}\n`);

    const worker = (slot.worker = startCli(['watch', '--config', wd.configPath], { RISKFOLD_ATTACK_TOKEN: token }));
    await waitFor(() => batchesDone(worker).length >= 1, 90_000, 'the catch-up batch');

    // the sender writes 20 of 41 rows, each with its line break, then pauses past watch.stableMs
    const rows = ids.map((id) => `2026-06-15,acct-b,${id},100\n`);
    const cut = path.join(wd.config.inbox, 'positions_0615.csv');
    writeFileSync(cut, `date,portfolio_id,security_id,quantity\n${rows.slice(0, 20).join('')}`);
    const held = await waitFor(() => worker.logLines().find((l) => l.msg === 'file held in the inbox' && l.file === 'positions_0615.csv'), 30_000, 'the hold');
    expect(held).toMatchObject({ code: 'snapshot_drop' });
    expect(String(held.reason)).toContain('has 20 holdings against 41');
    appendFileSync(cut, rows.slice(20).join(''));
    await waitFor(() => worker.logLines().find((l) => l.msg === 'file ingested' && l.file === 'positions_0615.csv'), 30_000, 'the whole file');
    await waitFor(() => worker.logLines().some((l) => l.stage === 'alerts' && JSON.stringify(l).includes('RISKFOLD_ATTACK_TOKEN')), 30_000, 'the refused delivery');
    await waitFor(() => readdirSync(wd.config.inbox).length === 0, 10_000, 'an empty inbox');
    worker.child.kill('SIGTERM');
    expect(await worker.exited).toEqual({ code: 0, signal: null });

    const db = await openDatabase(wd.config.database, { readOnly: true });
    try {
      expect(await db.all("select rows::integer as rows from ingested_files where name = 'positions_0615.csv'")).toEqual([{ rows: 41 }]);
      expect(await db.all("select count(*)::integer as n from positions where date = '2026-06-15'")).toEqual([{ n: 41 }]);
      const alerts = await db.all<{ kind: string; last_error: string | null }>('select kind, last_error from alerts order by created_at');
      expect(alerts.map((a) => a.kind)).toContain('file_held');
      expect(alerts.every((a) => a.last_error === null || a.last_error.includes('RISKFOLD_ATTACK_TOKEN'))).toBe(true);
      expect(await db.all("select count(*)::integer as n from limit_breaches where portfolio_id = 'acct-b'")).toEqual([{ n: 0 }]);
    } finally {
      db.close();
    }
    const seen = [
      JSON.stringify(worker.logLines()),
      runCli(['status', '--details', '--config', wd.configPath]).stdout,
      runCli(['sql', '--config', wd.configPath, 'select last_error from alerts']).stdout,
    ].join('\n');
    for (const piece of ['tok3n-HEAD', 'X-Injected', 'tok3n-TAIL']) expect(seen).not.toContain(piece);
  }, 240_000);
});
