import { execFile } from 'node:child_process';
import { existsSync } from 'node:fs';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import { promisify } from 'node:util';
import { chromium, type Browser } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { runRecompute } from '../../src/batch/runRecompute.ts';
import { writeFirmReport } from '../../src/report/writeReport.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';
import { buildScenario, loadDays, RISK } from '../risk/stage/scenario.ts';

// Debian's chromium, as in browser.test.ts; playwright drives it and downloads nothing.
const CHROMIUM = '/usr/bin/chromium';
const CHROMIUM_ARGS = ['--headless', '--no-sandbox', '--disable-gpu', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync'];
const CLI = path.resolve(import.meta.dirname, '../../bin/riskfold.js');
const run = promisify(execFile);

/**
 * The firm-wide page from a real recompute of the risk stage's seeded scenario (two
 * accounts of invented securities): acct-growth under a limit low enough to be in
 * breach since its first figures, acct-income under the firm-wide one it stays within,
 * and an account holding only a security without prices (unvalued: no volatility).
 */
describe('riskfold report --all in a real browser', () => {
  let browser: Browser;
  let ws: TempWorkspace;
  beforeAll(async () => {
    browser = await chromium.launch({ executablePath: CHROMIUM, args: CHROMIUM_ARGS });
    ws = await tempWorkspace({
      risk: RISK,
      // several watched figures (a backtest zone of every method among them): the table must still fit the page
      limits: [
        { portfolio: '*', window: 63, limit: 0.9 },
        { portfolio: 'acct-growth', window: 63, limit: 0.02 },
        { portfolio: '*', metric: 'vol_realized', window: 63, limit: 0.9 },
        { portfolio: '*', metric: 'var_99_1d', window: 63, limit: 0.5 },
        { portfolio: '*', metric: 'backtest_zone', window: 63 },
      ],
    });
    const s = buildScenario();
    await loadDays(ws.db, s, 0, s.dates.length - 1);
    await ws.db.run(`insert into positions values (900, 1, '${s.dates[5]}', 'acct-unpriced', 'EQ-NOWHERE', 10)`);
    await runRecompute(ws.db, ws.config, ws.log, { trigger: 'test' });
    ws.db.close();
  });
  afterAll(async () => {
    await browser?.close();
    ws?.cleanup();
  });

  it('lists every portfolio against its limits, the open episode and the data problems, linking to pages written beside it', async () => {
    const out = path.join(ws.dir, 'overview.html');
    const written = await writeFirmReport(ws.config, { out, now: new Date('2026-12-01T12:00:00Z') });
    expect(written.file).toBe(out);
    expect(written.pages.map((p) => p.portfolio)).toEqual(['acct-growth', 'acct-income', 'acct-unpriced']);
    for (const p of written.pages) expect(existsSync(p.file)).toBe(true);

    const page = await browser.newPage({ viewport: { width: 1100, height: 900 } });
    const requests: string[] = [];
    page.on('request', (r) => requests.push(r.url()));
    await page.goto(pathToFileURL(out).href);
    expect(requests).toEqual([pathToFileURL(out).href]);
    const tables = await page.evaluate(() =>
      [...document.querySelectorAll('section')].map((s) => ({
        title: s.querySelector('h2')?.textContent ?? '',
        header: [...s.querySelectorAll('th')].map((th) => th.textContent),
        rows: [...s.querySelectorAll('tbody tr')].map((tr) => [...tr.querySelectorAll('td')].map((td) => td.textContent ?? '')),
        links: [...s.querySelectorAll('a')].map((a) => ({ text: a.textContent, href: (a as HTMLAnchorElement).href })),
      })),
    );
    const [limits, episodes, problems] = tables;
    expect(limits.title).toBe('Portfolios against their limits');
    expect(limits.header).toEqual(['portfolio', 'as of', 'value', 'figure', 'now', 'limit', 'headroom', 'episode', 'since', 'coverage', 'status']);
    // one row per portfolio and watched figure; the portfolio's own cells span its rows
    const figureRows = await page.evaluate(() =>
      [...document.querySelectorAll('#standings tbody tr')].map((tr) => {
        const cells = [...tr.querySelectorAll('td')].map((td) => td.textContent ?? '');
        const own = tr.querySelector('a') !== null;
        return { portfolio: tr.getAttribute('data-portfolio'), figure: cells[own ? 3 : 0], episode: cells[own ? 7 : 4], status: own ? cells[10] : null };
      }),
    );
    const watched = ['63-day volatility', '63-day realized volatility', '63-day 99% 1-day VaR (of value)', '99% VaR backtest (normal, 63-day)'];
    const backtests = ['historical', 'filtered historical'].flatMap((m) => [250, 500].map((n) => `99% VaR backtest (${m}, ${n} scenarios)`));
    expect(figureRows.filter((r) => r.portfolio === 'acct-growth').map((r) => r.figure)).toEqual([...watched, ...backtests]);
    expect(figureRows.filter((r) => r.status !== null).map((r) => [r.portfolio, r.figure, r.episode, r.status])).toEqual([
      ['acct-growth', '63-day volatility', 'breach', 'ok'],
      // the income account's EQ-FERNHOLT lost its history in the scenario's long gap
      ['acct-income', '63-day volatility', 'clear', 'partial_history'],
      ['acct-unpriced', '63-day volatility', 'clear', 'unpriced'],
    ]);
    // nine watched figures and no sideways scrolling at a laptop's width
    const overflow = await page.evaluate(() => {
      const box = document.querySelector('#standings')!;
      return box.scrollWidth - box.clientWidth;
    });
    expect(overflow).toBe(0);
    expect(limits.links.map((l) => l.text)).toEqual(['acct-growth', 'acct-income', 'acct-unpriced']);
    expect(episodes.title).toBe('Open limit episodes');
    expect(episodes.rows.map((r) => [r[0], r[1], r[2]])).toEqual([['acct-growth', '63-day volatility', 'breach']]);
    expect(problems.title).toBe('Data problems');
    expect(problems.rows.find((r) => r[0] === 'acct-unpriced')?.[4]).toBe('EQ-NOWHERE');

    // every link opens that portfolio's own page
    for (const link of limits.links) {
      const target = await browser.newPage();
      await target.goto(link.href);
      expect(await target.locator('h1').textContent()).toBe(link.text);
      await target.close();
    }
    if (process.env.RISKFOLD_KEEP_SCREENSHOT) await page.screenshot({ path: process.env.RISKFOLD_KEEP_SCREENSHOT, fullPage: true });
    await page.emulateMedia({ media: 'print' });
    expect(await page.evaluate(() => getComputedStyle(document.body).backgroundColor)).toBe('rgb(255, 255, 255)');
    await page.close();
  });

  it('runs from the command line, and refuses --portfolio with --all with a one-line reason', async () => {
    const args = ['report', '--config', ws.config.configPath, '--all', '--portfolio', 'acct-growth'];
    const failed = await run(process.execPath, [CLI, ...args]).catch((e: { code: number; stderr: string }) => e);
    expect('code' in failed && failed.code).toBe(2);
    expect(failed.stderr.trim()).toMatch(/^[^\n]*report needs either --portfolio <id> or --all$/);
    const out = path.join(ws.dir, 'all.html');
    const ok = await run(process.execPath, [CLI, 'report', '--config', ws.config.configPath, '--all', '--out', out]);
    expect(ok.stdout).toContain(`overview of 3 portfolio pages as of`);
    expect(existsSync(out)).toBe(true);
  });
});
