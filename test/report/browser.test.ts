import { copyFileSync, statSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import { chromium, type Browser } from 'playwright-core';
import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest';
import { reportHtml } from '../../src/report/writeReport.ts';
import { refreshDerived } from '../../src/storage/derived.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';
import { FIXTURE_CONFIG, FIXTURE_EXCEPTION_DAYS, FIXTURE_PORTFOLIO, FIXTURE_SECURITIES, fillReportFixture } from './fixture.ts';

// Debian's chromium (CI installs it with apt); playwright drives it, it downloads nothing.
const CHROMIUM = '/usr/bin/chromium';
const CHROMIUM_ARGS = [
  '--headless',
  '--no-sandbox',
  '--disable-gpu',
  '--disable-quic',
  '--no-first-run',
  '--disable-background-networking',
  '--disable-component-update',
  '--disable-sync',
];

interface ChartGeometry {
  id: string;
  width: number;
  height: number;
  polylines: number[];
  bars: { width: number; height: number }[];
  bands: { width: number; height: number }[];
  cells: { width: number; height: number; fill: string }[];
  references: number;
  topTick: string;
}

describe('the report in a real browser', () => {
  let browser: Browser;
  let ws: TempWorkspace | undefined;
  beforeAll(async () => {
    browser = await chromium.launch({ executablePath: CHROMIUM, args: CHROMIUM_ARGS });
  });
  afterAll(async () => browser?.close());
  afterEach(() => ws?.cleanup());

  it('draws every chart with data, loads nothing from outside, and prints on white over several pages', async () => {
    ws = await tempWorkspace(FIXTURE_CONFIG);
    const fixture = await fillReportFixture(ws.db);
    // a benchmark, so the page shows its section too
    await ws.db.run(
      `update risk_daily set benchmark_id = 'bm-policy', tracking_error_ex_ante = 0.02, beta_to_benchmark = 0.95 where portfolio_id = $1`,
      [FIXTURE_PORTFOLIO],
    );
    await ws.db.run(
      `insert into risk_active_contributions (portfolio_id, date, window_days, estimator, benchmark_id, security_id, weight, benchmark_weight, active_weight, mcr, ccr, pct, run_id)
       values ($1, $2::date, 63, 'sample', 'bm-policy', 'EQ-VELLANCE', 0.24, 0.1, 0.14, 0.14, 0.02, 1, 7)`,
      [FIXTURE_PORTFOLIO, fixture.asOf],
    );
    // a rebalance inside the charts' dates: a new snapshot with more of one holding
    const rebalanced = fixture.dates[250];
    await ws.db.run(
      `insert into positions (date, portfolio_id, security_id, quantity, file_id, line)
       select $1::date, portfolio_id, security_id, case when security_id = 'EQ-VELLANCE' then quantity + 1000 else quantity end, file_id, line + 100
       from positions where portfolio_id = $2`,
      [rebalanced, FIXTURE_PORTFOLIO],
    );
    await refreshDerived(ws.db);
    const { html } = await reportHtml(ws.db, ws.config, FIXTURE_PORTFOLIO, new Date('2026-12-01T12:00:00Z'));
    const file = path.join(ws.dir, 'report.html');
    writeFileSync(file, html);

    const page = await browser.newPage({ viewport: { width: 1100, height: 900 } });
    const requests: string[] = [];
    page.on('request', (r) => requests.push(r.url()));
    await page.goto(pathToFileURL(file).href);
    const screenshot = path.join(ws.dir, 'report.png');
    await page.screenshot({ path: screenshot, fullPage: true });
    expect(statSync(screenshot).size).toBeGreaterThan(50_000);
    // RISKFOLD_KEEP_SCREENSHOT=path keeps a copy for a person to look at
    if (process.env.RISKFOLD_KEEP_SCREENSHOT) copyFileSync(screenshot, process.env.RISKFOLD_KEEP_SCREENSHOT);
    expect(requests).toEqual([pathToFileURL(file).href]);

    const charts = await page.evaluate(() => {
      const box = (e: Element) => {
        const r = e.getBoundingClientRect();
        return { width: r.width, height: r.height };
      };
      return [...document.querySelectorAll('svg[data-chart]')].map((svg) => ({
        id: svg.getAttribute('data-chart') ?? '',
        ...box(svg),
        polylines: [...svg.querySelectorAll('polyline')].map((p) => (p.getAttribute('points') ?? '').trim().split(/\s+/).length),
        bars: [...svg.querySelectorAll('rect.bar')].map(box),
        bands: [...svg.querySelectorAll('rect.band')].map(box),
        cells: [...svg.querySelectorAll('rect.cell')].map((c) => ({ ...box(c), fill: getComputedStyle(c).fill })),
        references: svg.querySelectorAll('line.reference').length,
        // the tick label nearest the top of the plot
        topTick: [...svg.querySelectorAll('text.tick')].filter((t) => t.getAttribute('text-anchor') === 'end').map((t) => t.textContent ?? '').pop() ?? '',
      }));
    });
    const byId = new Map<string, ChartGeometry>(charts.map((c) => [c.id, c]));
    // the rebalance: a visible tick with its date on each ex-ante panel and the realized chart, and a legend line under each of those four
    const ticks = await page.evaluate(() =>
      [...document.querySelectorAll('svg[data-chart] line.marker')].map((l) => ({
        chart: l.closest('svg')?.getAttribute('data-chart'),
        height: l.getBoundingClientRect().height,
        title: l.querySelector('title')?.textContent,
      })),
    );
    expect(ticks.map((t) => t.chart)).toEqual(['vol-ex-ante-21', 'vol-ex-ante-63', 'vol-ex-ante-ewma', 'vol-realized']);
    expect(ticks.every((t) => t.height > 5 && t.title === `rebalance ${rebalanced}`)).toBe(true);
    const tickKeys = await page.evaluate(() =>
      [...document.querySelectorAll('.legend-item')]
        .filter((i) => i.textContent === 'rebalance (new positions snapshot)')
        .map((i) => i.querySelector('.swatch-tick')?.getBoundingClientRect().height ?? 0),
    );
    expect(tickKeys).toHaveLength(4);
    expect(tickKeys.every((h) => h > 5)).toBe(true);
    expect([...byId.keys()]).toEqual([
      'vol-ex-ante-21',
      'vol-ex-ante-63',
      'vol-ex-ante-252',
      'vol-ex-ante-ewma',
      'vol-change',
      'vol-change-holdings',
      'vol-realized',
      'contributions',
      'correlation',
      'backtest',
    ]);
    for (const c of charts) {
      expect(c.width, c.id).toBeGreaterThan(300);
      expect(c.height, c.id).toBeGreaterThan(100);
    }
    // the charts' 126 dates: a point per date for 21-day, 63-day and EWMA; the 252-day window fills only its last 68
    expect(['21', '63', '252', 'ewma'].map((w) => byId.get(`vol-ex-ante-${w}`)!.polylines)).toEqual([[126], [126], [68], [126]]);
    // the 63-day limit's episode and its lines only on the 63-day panel
    expect(['21', '63', '252', 'ewma'].map((w) => byId.get(`vol-ex-ante-${w}`)!.bands.length)).toEqual([0, 1, 0, 0]);
    expect(byId.get('vol-ex-ante-63')!.bands[0].width).toBeGreaterThan(50);
    expect(['21', '63', '252', 'ewma'].map((w) => byId.get(`vol-ex-ante-${w}`)!.references)).toEqual([0, 2, 0, 0]);
    // the panels share one scale: the same top tick
    expect(new Set(['21', '63', '252', 'ewma'].map((w) => byId.get(`vol-ex-ante-${w}`)!.topTick)).size).toBe(1);
    // market, weights and total, summed over the same 126 dates; the latest day's weights part over the five holdings
    expect(byId.get('vol-change')!.polylines).toEqual([126, 126, 126]);
    expect(byId.get('vol-change-holdings')!.bars).toHaveLength(FIXTURE_SECURITIES.length);
    expect(byId.get('vol-realized')!.polylines).toEqual([126, 126]);
    const bars = byId.get('contributions')!.bars;
    expect(bars).toHaveLength(FIXTURE_SECURITIES.length);
    expect(bars.every((b) => b.width > 0 && b.height > 5)).toBe(true);
    const cells = byId.get('correlation')!.cells;
    expect(cells).toHaveLength(FIXTURE_SECURITIES.length ** 2);
    expect(cells.every((c) => c.width > 20 && c.height > 20)).toBe(true);
    expect(new Set(cells.map((c) => c.fill)).size).toBeGreaterThan(5);
    // the backtest: loss and predicted VaR over the chart's 126 dates, each exception day marked
    const backtest = byId.get('backtest')!;
    expect(backtest.polylines).toEqual([126, 126]);
    expect(backtest.bands).toHaveLength(FIXTURE_EXCEPTION_DAYS.length);
    expect(backtest.bands.every((b) => b.width > 0 && b.height > 50)).toBe(true);
    const lossTables = await page.evaluate(() =>
      [...document.querySelectorAll('section')]
        .filter((s) => /Losses beyond|backtest|Stress scenarios/.test(s.querySelector('h2')?.textContent ?? ''))
        .map((s) => [...s.querySelectorAll('tbody tr')].map((tr) => [...tr.querySelectorAll('td')].map((td) => td.textContent))),
    );
    expect(lossTables.map((rows) => rows.length)).toEqual([3, 1, 3]);
    expect(lossTables[0].map((r) => r[0])).toEqual(['normal, 63-day', 'historical, 250 scenarios', 'filtered historical, 250 scenarios']);
    expect(lossTables[1][0]).toEqual(['normal, 63-day', '250', String(FIXTURE_EXCEPTION_DAYS.length), '0.50', '0.480', '0.750', 'green']);
    expect(lossTables[2].find((r) => r[0] === 'spring-slide')?.[6]).toBe('CM-EMBERSTONE');

    // the exposures (4 asset classes, 2 currencies) and the benchmark's windows and contributor, laid out as tables
    const tables = await page.evaluate(() =>
      ['exposures', 'benchmark'].map((id) =>
        [...document.querySelectorAll(`section[data-section="${id}"] table`)].map((t) => ({
          rows: t.querySelectorAll('tbody tr').length,
          width: t.getBoundingClientRect().width,
        })),
      ),
    );
    expect(tables[0].map((t) => t.rows)).toEqual([4, 2]);
    expect(tables[1].map((t) => t.rows)).toEqual([4, 1]);
    expect(tables.flat().every((t) => t.width > 200)).toBe(true);
    // the holdings: the five securities and the cash balance, each row with its eight cells, fitting the page
    const holdings = await page.evaluate(() => {
      const t = document.querySelector('section[data-section="holdings"] table');
      return {
        cells: [...(t?.querySelectorAll('tbody tr') ?? [])].map((tr) => tr.querySelectorAll('td').length),
        ids: [...(t?.querySelectorAll('tbody tr td:first-child') ?? [])].map((td) => td.textContent),
        width: t?.getBoundingClientRect().width ?? 0,
        pageWidth: document.documentElement.clientWidth,
      };
    });
    expect(holdings.cells).toEqual(Array(FIXTURE_SECURITIES.length + 1).fill(8));
    expect([...holdings.ids].sort()).toEqual([...FIXTURE_SECURITIES, 'CASH:USD'].sort());
    expect(holdings.width).toBeGreaterThan(200);
    expect(holdings.width).toBeLessThanOrEqual(holdings.pageWidth);

    await page.emulateMedia({ media: 'print' });
    expect(await page.evaluate(() => getComputedStyle(document.body).backgroundColor)).toBe('rgb(255, 255, 255)');
    const pdf = await page.pdf({ format: 'A4' });
    expect(pdf.toString('latin1').match(/\/Type\s*\/Page\b/g)?.length ?? 0).toBeGreaterThanOrEqual(2);
    await page.close();
  });
});
