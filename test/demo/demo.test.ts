import { execFile } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { promisify } from 'node:util';
import { chromium } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { holdingsOn, priceInBase, valueOf } from '../../src/demo/holdings.ts';
import { runDemo, type DemoResult } from '../../src/demo/runDemo.ts';
import { buildScenario } from '../../src/demo/scenario.ts';
import { formatSummary } from '../../src/demo/summary.ts';
import { ACCOUNTS } from '../../src/demo/universe.ts';
import { memoryLogger } from '../../src/log/logger.ts';
import { CAUTIONS } from '../../src/report/cautions.ts';
import { formatMoney, formatPercent } from '../../src/report/format.ts';
import { openDatabase, type Database } from '../../src/storage/database.ts';

const run = promisify(execFile);
const CLI = path.resolve(import.meta.dirname, '../../bin/riskfold.js');

describe('riskfold demo, end to end', () => {
  const parent = mkdtempSync(path.join(tmpdir(), 'riskfold-demo-test-'));
  const scenario = buildScenario();
  let result: DemoResult;
  let text: string;
  let db: Database;

  beforeAll(async () => {
    result = await runDemo(memoryLogger('warn').log, { dir: path.join(parent, 'demo'), now: new Date('2026-12-01T12:00:00Z') });
    text = formatSummary(result.summary, result);
    db = await openDatabase(result.config.database, { readOnly: true });
  }, 240_000);
  afterAll(() => {
    db?.close();
    rmSync(parent, { recursive: true, force: true });
  });

  it('prints each account with the value and 63-day volatility the database holds, against its limit', async () => {
    for (const account of ACCOUNTS) {
      const [row] = await db.all<{ portfolio_value: number; vol_ex_ante: number }>(
        `select portfolio_value, vol_ex_ante from risk_daily
         where portfolio_id = $1 and window_days = 63 and estimator = 'sample' order by date desc limit 1`,
        [account.id],
      );
      const line = text.split('\n').find((l) => l.trimStart().startsWith(`${account.id} `))!;
      expect(line).toContain(formatMoney(row.portfolio_value));
      expect(line).toContain(formatPercent(row.vol_ex_ante));
      expect(line).toContain(formatPercent(account.volLimit));
    }
  });

  it('measures the balanced account against its policy benchmark and shows every account\'s exposures by asset class', async () => {
    const [te] = await db.all<{ benchmark_id: string; te: number; realized: number; beta: number }>(
      `select benchmark_id, tracking_error_ex_ante as te, tracking_error_realized as realized, beta_to_benchmark as beta from risk_daily
       where portfolio_id = 'fpw-balanced' and window_days = 63 and estimator = 'sample' order by date desc limit 1`,
    );
    // a policy mix close to the account's own targets: a small tracking error, a beta near 1 (invented data, loose bounds)
    expect(te.benchmark_id).toBe('bm-balanced-policy');
    expect(te.te).toBeGreaterThan(0.001);
    expect(te.te).toBeLessThan(0.05);
    expect(te.realized).toBeGreaterThan(0);
    expect(te.beta).toBeGreaterThan(0.7);
    expect(te.beta).toBeLessThan(1.3);
    const others = await db.all("select count(tracking_error_ex_ante)::integer as n from risk_daily where portfolio_id <> 'fpw-balanced'");
    expect(others).toEqual([{ n: 0 }]);
    const buckets = await db.all<{ portfolio_id: string; buckets: string[]; total: number }>(
      `select portfolio_id, list(bucket order by bucket) as buckets, sum(weight) as total from exposure_daily
       where dimension = 'asset_class' and date = (select max(date) from exposure_daily) group by portfolio_id order by portfolio_id`,
    );
    expect(buckets.map((b) => [b.portfolio_id, b.buckets])).toEqual([
      ['fpw-balanced', ['bond', 'cash', 'commodity', 'equity']],
      ['fpw-growth', expect.arrayContaining(['cash', 'equity'])],
      ['fpw-income', ['bond', 'cash', 'commodity', 'equity']],
    ]);
    for (const b of buckets) expect(b.total).toBeCloseTo(1, 12);
  });

  it('has an account that breached its 63-day limit and later recovered, and says so in alerts', async () => {
    const episodes = await db.all<{ portfolio_id: string; level: string; closed_on: string | null }>(
      "select portfolio_id, level, closed_on from limit_breaches where level = 'breach' and not retracted",
    );
    const recovered = episodes.filter((e) => e.closed_on !== null);
    expect(recovered.length).toBeGreaterThanOrEqual(1);
    const kinds = await db.all<{ kind: string }>('select kind from alerts where portfolio_id = $1 order by as_of', [recovered[0].portfolio_id]);
    expect(kinds.map((k) => k.kind)).toEqual(['limit_opened', 'limit_escalated', 'limit_closed']);
    expect(result.reportFile).toContain(`report-${recovered[0].portfolio_id}-`);
  });

  it('counts the alerts as the outbox and the JSON Lines file do, and lists each one', async () => {
    const alerts = await db.all<{ kind: string; as_of: string }>('select kind, as_of from alerts');
    expect(text).toContain(`Alerts raised: ${alerts.length} (${alerts.length} lines in ${result.config.alerts.file})`);
    const lines = readFileSync(result.config.alerts.file!, 'utf8').split('\n').filter(Boolean);
    expect(lines).toHaveLength(alerts.length);
    // an alert about a file (file_rejected) has no valuation date: the summary shows dashes
    for (const a of alerts) expect(text).toMatch(new RegExp(`${a.as_of ?? '-{10}'}\\s+${a.kind}\\s`));
  });

  it('names the quarantined file and its reason, and the file sits in quarantine/', async () => {
    const rejected = await db.all<{ name: string; error: string }>("select name, error from ingested_files where status = 'rejected'");
    expect(rejected).toHaveLength(1);
    const malformedDate = scenario.market.dates[scenario.historyDays + scenario.incidents.malformed.drop].replaceAll('-', '');
    expect(rejected[0].name).toBe(`prices_${malformedDate}.csv`);
    expect(rejected[0].error).toMatch(/column price: "-[\d.]+" is not a positive number/);
    expect(text).toContain(`${rejected[0].name}: ${rejected[0].error}`);
    expect(readdirSync(result.config.quarantine)).toContain(rejected[0].name);
  });

  it('lets the correction win: clean_prices has the right price, prices keeps both deliveries', async () => {
    const { correction } = scenario.incidents;
    const t = scenario.historyDays + correction.drop;
    const date = scenario.market.dates[t];
    const right = scenario.market.prices.get(correction.securityId)![t];
    const [clean] = await db.all<{ price: number }>('select price from clean_prices where date = $1 and security_id = $2', [date, correction.securityId]);
    expect(clean.price).toBe(right);
    const raw = await db.all<{ price: number }>('select price from prices where date = $1 and security_id = $2 order by file_id', [date, correction.securityId]);
    expect(raw.map((r) => r.price)).toEqual([expect.closeTo(right * correction.wrongFactor, 3), right]);
    expect(text).toMatch(/prices_\d{8}_correction\.csv: 1 price/);
  });

  it('shows the correction both ways, one query each: as reported before it arrived, and as known now', async () => {
    const { correction } = scenario.incidents;
    const t = scenario.historyDays + correction.drop;
    const both = result.summary.bothWays!;
    expect(both.date).toBe(scenario.market.dates[t]);
    expect(both.file).toMatch(/^prices_\d{8}_correction\.csv$/);
    // each printed query, run by the read-only sql command, gives the printed figures at full precision
    for (const [query, column] of [[both.asReported, 'as_reported'], [both.asKnown, 'as_known']] as const) {
      const { stdout } = await run(process.execPath, [CLI, 'sql', '--config', result.config.configPath, '--format', 'json', query]);
      const status = column === 'as_reported' ? 'reported_status' : 'known_status';
      expect(JSON.parse(stdout)).toEqual(both.rows.map((r) => ({ portfolio_id: r.portfolio_id, vol_ex_ante: r[column], status: r[status] })));
      expect(text).toContain(`"${query}"`);
    }
    // the wrong price, held out of risk, left the accounts that held the security (the
    // scenario's holdings) with a carried price until the correction, and only them; a
    // recompute from another start may differ in the last bits
    for (const r of both.rows) {
      const held = holdingsOn(scenario.snapshots, r.portfolio_id, both.date).has(correction.securityId);
      const moved = Math.abs(r.as_reported! - r.as_known!);
      if (held) {
        expect(moved, r.portfolio_id).toBeGreaterThan(1e-6);
        expect([r.reported_status, r.known_status], r.portfolio_id).toEqual(['stale_prices', 'ok']);
      } else {
        expect(moved, r.portfolio_id).toBeLessThan(1e-12);
        expect(r.reported_status).toBe(r.known_status);
      }
      const printed = [formatPercent(r.as_reported, 3), r.reported_status, formatPercent(r.as_known, 3), r.known_status];
      expect(text).toMatch(new RegExp(`${r.portfolio_id}\\s+${printed.join('\\s+')}`));
    }
    expect(both.rows.filter((r) => holdingsOn(scenario.snapshots, r.portfolio_id, both.date).has(correction.securityId))).not.toEqual([]);
  });

  it('flags the 10x price as suspect, holds it out of risk, and clears the flag when the correction arrives', async () => {
    const { correction } = scenario.incidents;
    const date = scenario.market.dates[scenario.historyDays + correction.drop];
    const checks = await db.all<{ security_id: string; date: string; rules: string; cleared_reason: string }>(
      'select security_id, date::varchar as date, rules, cleared_reason from price_checks',
    );
    expect(checks).toEqual([
      { security_id: correction.securityId, date, rules: 'jump,power_of_ten', cleared_reason: expect.stringMatching(/^corrected to /) },
    ]);
    const alerts = await db.all<{ level: string }>("select payload->>'level' as level from alerts where kind = 'price_suspect' order by created_at");
    expect(alerts.map((a) => a.level)).toEqual(['suspect', 'cleared']);
  });

  it('computes the return of the withdrawal day from holdings, not from the fall in value (SPEC 4, recomputed from the scenario)', async () => {
    const flow = scenario.incidents.cashFlows.find((f) => f.amount < 0)!;
    const { dates } = scenario.market;
    const t = dates.indexOf(flow.date);
    const before = holdingsOn(scenario.snapshots, flow.portfolioId, dates[t - 1]);
    const expected =
      [...before].reduce((acc, [id, q]) => acc + q * (priceInBase(scenario.market, id, t) - priceInBase(scenario.market, id, t - 1)), 0) /
      valueOf(scenario.market, before, t - 1);
    const [row] = await db.all<{ simple_return: number }>('select simple_return from ret_portfolios where portfolio_id = $1 and date = $2', [
      flow.portfolioId,
      flow.date,
    ]);
    expect(row.simple_return).toBeCloseTo(expected, 10);
    const values = await db.all<{ value_base: number }>(
      'select value_base from value_portfolios where portfolio_id = $1 and date in ($2, $3) order by date',
      [flow.portfolioId, dates[t - 1], flow.date],
    );
    const valueChange = values[1].value_base / values[0].value_base - 1;
    expect(valueChange).toBeLessThan(row.simple_return - 0.03);
  });

  it('prints where things are, commands to try and the cautions', () => {
    expect(text).toContain(`database  ${result.config.database}`);
    expect(text).toContain(`npx riskfold sql --config ${result.config.configPath} "select`);
    for (const caution of CAUTIONS) expect(text).toContain(`  - ${caution}`);
  });

  it('writes a report of the breached account whose charts draw the real history in a browser', async () => {
    expect(existsSync(result.reportFile)).toBe(true);
    const browser = await chromium.launch({ executablePath: '/usr/bin/chromium', args: ['--headless', '--no-sandbox', '--disable-gpu'] });
    try {
      const page = await browser.newPage({ viewport: { width: 1100, height: 900 } });
      await page.goto(`file://${result.reportFile}`);
      await page.screenshot({ path: path.join(parent, 'demo-report.png'), fullPage: true });
      const drawn = await page.evaluate(() => ({
        points: [...document.querySelectorAll('svg[data-chart^="vol-ex-ante-"] polyline')].map((p) => (p.getAttribute('points') ?? '').split(' ').length),
        shrunk: document.querySelectorAll('svg[data-chart="vol-ex-ante-63"] polyline[data-series="63-day shrunk"]').length,
        bands: [...document.querySelectorAll('svg[data-chart="vol-ex-ante-63"] rect.band')].map((r) => r.getBoundingClientRect().width),
        changes: [...document.querySelectorAll('svg[data-chart="vol-change"] polyline')].map((p) => (p.getAttribute('points') ?? '').split(' ').length),
        bars: document.querySelectorAll('svg[data-chart="contributions"] rect.bar').length,
        cells: document.querySelectorAll('svg[data-chart="correlation"] rect.cell').length,
      }));
      // the charts cover the latest 126 valuation dates, all with figures in the demo
      expect(drawn.points.every((n) => n === 126)).toBe(true);
      expect(drawn.shrunk).toBe(1);
      expect(drawn.bands.length).toBeGreaterThanOrEqual(1);
      // why the 63-day volatility moved: market, weights and total over the same dates
      expect(drawn.changes).toEqual([126, 126, 126]);
      expect(drawn.bars).toBeGreaterThan(5);
      expect(drawn.cells).toBe(100);
    } finally {
      await browser.close();
    }
  });

  it('refuses to build into a folder that is not empty, with a one-line reason', async () => {
    const busy = path.join(parent, 'busy');
    mkdirSync(busy);
    writeFileSync(path.join(busy, 'keep.txt'), 'x');
    const failed = await run(process.execPath, [CLI, 'demo', busy]).catch((e: { code: number; stderr: string }) => e);
    expect('code' in failed && failed.code).toBe(2);
    expect(failed.stderr).toContain('is not empty');
  });
});
